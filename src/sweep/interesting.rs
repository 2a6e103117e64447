//! A function's interesting points, found by searching its correctly rounded reference:
//! kinks, saturation and overflow thresholds, and where |f′| peaks.

use crate::format::{Class, Format};
use crate::reference::Evaluator;
use rayon::prelude::*;
use serde::Serialize;

/// What kind of asymptote a threshold reaches.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum ThresholdKind {
    /// A finite asymptote (or zero).
    Saturation,
    /// ±∞.
    Overflow,
}

/// Where, going outward from zero on one side, a sequence of outputs reaches its asymptote
/// for good.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Threshold {
    /// The side: x > 0 when true.
    pub positive: bool,
    /// Saturation or overflow.
    pub kind: ThresholdKind,
    /// The asymptote's bit pattern (the reference at ±∞).
    pub asymptote: u32,
    /// First input (nearest zero) from which every input outward gives the asymptote; `None`
    /// when even the largest finite input does not.
    pub first: Option<u32>,
    /// Whether the M neighbours outward of `first` were checked one by one and agreed.
    pub confirmed: bool,
}

/// An input worth probing closely, and why.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Interesting {
    /// The input pattern.
    #[serde(skip)]
    pub input: u32,
    /// Why ("kink", "saturation threshold (+)", …).
    pub what: String,
}

/// Searches one side for the first input from which `holds` stays true outward: monotone
/// bisection over the ordinals, then each of the `confirm` inputs after it checked exactly (a
/// failure moves the threshold past it and marks it unconfirmed).
pub fn find_threshold(
    format: &dyn Format,
    positive: bool,
    confirm: u32,
    mut holds: impl FnMut(u32) -> bool,
) -> (Option<u32>, bool) {
    let top = format.ordinal(format.max_finite(false));
    let at = |i: i64| format.from_ordinal(if positive { i } else { -i });
    let zero = if positive {
        0
    } else {
        format.infinity(true) & !format.infinity(false)
    };
    let input = |i: i64| if i == 0 { zero } else { at(i) };
    if !holds(input(top)) {
        return (None, true);
    }
    let (mut lo, mut hi) = (-1i64, top);
    while hi - lo > 1 {
        let mid = lo + (hi - lo) / 2;
        if mid >= 0 && holds(input(mid)) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    let mut first = hi;
    let mut confirmed = hi == 0 || !holds(input(hi - 1));
    for i in hi + 1..=(hi + confirm as i64).min(top) {
        if !holds(input(i)) {
            first = i + 1;
            confirmed = false;
        }
    }
    (Some(input(first.min(top))), confirmed)
}

/// Reference thresholds of one evaluator on both sides.
pub fn reference_thresholds(evaluator: &Evaluator, confirm: u32) -> Vec<Threshold> {
    let format = evaluator.format();
    let input = evaluator.input_format();
    [true, false]
        .into_iter()
        .filter_map(|positive| {
            let asymptote = evaluator.reference(input.infinity(!positive)).ok()?.bits;
            if format.classify(asymptote) == Class::Nan {
                return None;
            }
            let kind = if format.classify(asymptote) == Class::Infinite {
                ThresholdKind::Overflow
            } else {
                ThresholdKind::Saturation
            };
            let (first, confirmed) = find_threshold(input, positive, confirm, |x| {
                evaluator.reference(x).is_ok_and(|r| r.bits == asymptote)
            });
            Some(Threshold {
                positive,
                kind,
                asymptote,
                first,
                confirmed,
            })
        })
        .collect()
}

/// The finite input where |f′| is largest, when that maximum is interior (not approached at
/// ±∞): a coarse grid over [−32, 32], then finer grids between the best sample's neighbours.
pub fn derivative_peak(derivative: &Evaluator) -> Option<u32> {
    let format = derivative.input_format();
    let magnitude = |x: u32| {
        derivative
            .reference(x)
            .ok()
            .and_then(|r| r.exact)
            .map(|e| e.approx.abs())
    };
    let grid: Vec<i64> = (-1024..=1024)
        .filter_map(|i| format.from_f64_exact(i as f64 / 32.0))
        .map(|b| format.ordinal(b))
        .collect();
    let argmax = |candidates: &[i64]| -> Option<(usize, f64, Vec<f64>)> {
        let values: Vec<f64> = candidates
            .par_iter()
            .map(|&o| magnitude(format.from_ordinal(o)).unwrap_or(f64::NAN))
            .collect();
        // Ties go to the lowest ordinal, so the answer does not depend on thread timing.
        let (best, &peak) = values
            .iter()
            .enumerate()
            .filter(|(_, v)| v.is_finite())
            .max_by(|a, b| a.1.total_cmp(b.1).then(b.0.cmp(&a.0)))?;
        Some((best, peak, values))
    };
    let (mut best, peak, values) = argmax(&grid)?;
    if !(values[0] < peak && values[values.len() - 1] < peak) {
        return None;
    }
    let mut candidates = grid;
    loop {
        let lo = candidates[best.saturating_sub(1)];
        let hi = candidates[(best + 1).min(candidates.len() - 1)];
        let exhaustive = hi - lo <= 256;
        candidates = if exhaustive {
            (lo..=hi).collect()
        } else {
            let mut c: Vec<i64> = (0..=256).map(|j| lo + (hi - lo) * j / 256).collect();
            c.dedup();
            c
        };
        best = argmax(&candidates)?.0;
        if exhaustive {
            return Some(format.from_ordinal(candidates[best]));
        }
    }
}

/// Kinks, thresholds of f (and of the role's function) and the derivative peak, as inputs;
/// the thresholds of `role_evaluator` are returned too.
pub fn interesting_points(
    forward: &Evaluator,
    derivative: &Evaluator,
    role_is_forward: bool,
    confirm: u32,
) -> (Vec<Interesting>, Vec<Threshold>) {
    let format = forward.input_format();
    let mut points = Vec::new();
    for kink in forward.function().kinks(forward.constants()) {
        if let Some(bits) = format.from_f64_exact(kink.at as f64) {
            points.push(Interesting {
                input: bits,
                what: "kink".into(),
            });
        }
    }
    let forward_thresholds = reference_thresholds(forward, confirm);
    let role_thresholds = if role_is_forward {
        forward_thresholds.clone()
    } else {
        reference_thresholds(derivative, confirm)
    };
    let mut add_thresholds = |list: &[Threshold], of: &str| {
        for t in list {
            if let Some(first) = t.first {
                let kind = match t.kind {
                    ThresholdKind::Saturation => "saturation",
                    ThresholdKind::Overflow => "overflow",
                };
                let side = if t.positive { "+" } else { "-" };
                points.push(Interesting {
                    input: first,
                    what: format!("{kind} threshold of {of} ({side})"),
                });
            }
        }
    };
    add_thresholds(&forward_thresholds, "f");
    if !role_is_forward {
        add_thresholds(&role_thresholds, "f'");
    }
    if let Some(peak) = derivative_peak(derivative) {
        points.push(Interesting {
            input: peak,
            what: "derivative peak".into(),
        });
    }
    (points, role_thresholds)
}
