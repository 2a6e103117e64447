//! A kernel that returns the correctly rounded reference, and one that returns the next
//! representable value above it, measured exhaustively; the figures are recomputed here with
//! MPFR directly (rug), not with ulpgauge's measure code.

mod check_support;

use check_support::{config, evaluator};
use rug::Float;
use ulpgauge::activation::Role;
use ulpgauge::check::{run_check, CheckRole, InProcessKernel};
use ulpgauge::format::{Binary16, Class, Format};
use ulpgauge::sweep::SweepKind;

/// sigmoid(x) = 1/(1 + e^−x) at 256 bits, straight from MPFR (no cancellation for x ≤ 0).
fn sigmoid_256(x: f64) -> Float {
    let t = Float::with_val(256, -x).exp();
    Float::with_val(256, 1) / (t + 1u32)
}

/// |ŷ − sigmoid(x)| / ulp(sigmoid(x)) without cancellation: for x > 0, y = 1 − s with
/// s = sigmoid(−x) > 0, so y lies in (1/2, 1) where ulp = 2^−11, and ŷ − y = (ŷ − 1) + s with
/// ŷ − 1 exact.
fn error_ulps(x: f64, y_hat: f64) -> Float {
    if x > 0.0 {
        let s = sigmoid_256(-x);
        let diff = Float::with_val(256, y_hat - 1.0) + s;
        Float::with_val(256, diff.abs() * Float::with_val(256, Float::i_exp(1, 11)))
    } else {
        let y = sigmoid_256(x);
        Float::with_val(256, Float::with_val(256, y_hat) - &y).abs() / ulp_f16(&y)
    }
}

/// ulp(y) = 2^(max(⌊log2|y|⌋, emin) − p + 1) (J.-M. Muller, "On the definition of ulp(x)",
/// INRIA RR-5504, 2005); binary16: p = 11, emin = −14 (IEEE 754-2019 Table 3.5).
fn ulp_f16(y: &Float) -> Float {
    let e = if y.is_zero() {
        -14
    } else {
        (y.get_exp().unwrap() - 1).max(-14)
    };
    Float::with_val(256, Float::i_exp(1, e - 10))
}

/// RN(f(x)) for every binary16 pattern, from ulpgauge's reference engine (what the kernels
/// return; the figures below do not use it).
fn table(function: &str) -> Vec<u32> {
    use rayon::prelude::*;
    let reference = evaluator(function, &Binary16, Role::Forward);
    (0u32..65536)
        .into_par_iter()
        .map(|x| reference.reference(x).unwrap().bits)
        .collect()
}

#[test]
fn correctly_rounded_kernel_is_reported_correctly_rounded() {
    let table = table("sigmoid");
    let mut kernel = InProcessKernel::new(|x, _| Some(table[x as usize]));
    let cfg = config(
        "sigmoid",
        &Binary16,
        CheckRole::Forward,
        &[SweepKind::Exhaustive],
        None,
    );
    let report = run_check(&mut kernel, &cfg).expect("check");
    let acc = &report.accuracy.figures;
    // Round to nearest is within half an ulp by definition (IEEE 754-2019 §4.3.1).
    assert!(acc.max_ulp <= 0.5, "max_ulp {}", acc.max_ulp);
    assert_eq!(acc.correctly_rounded, 1.0);
    assert_eq!(acc.faithful, 1.0);
    // Finite non-NaN binary16 inputs: 2·(31·1024) = 63488 (IEEE 754 binary16: 5-bit exponent,
    // 10-bit significand, one exponent value reserved); sigmoid is finite on all of them.
    assert_eq!(acc.points, 63488);
    assert!(report.non_finite.is_empty());
    assert!(report.crash.is_none());
    assert!(report.special_values.iter().all(|s| s.passed));
    assert_eq!(report.verdict.exit_code, 0);
}

#[test]
fn next_up_kernel_reports_exact_step_distances() {
    let table = table("sigmoid");
    let f = &Binary16;
    let mut kernel = InProcessKernel::new(|x, _| {
        let r = table[x as usize];
        Some(if matches!(f.classify(r), Class::Nan | Class::Infinite) {
            r
        } else {
            f.next_up(r)
        })
    });
    let cfg = config(
        "sigmoid",
        &Binary16,
        CheckRole::Forward,
        &[SweepKind::Exhaustive],
        None,
    );
    let report = run_check(&mut kernel, &cfg).expect("check");
    let acc = &report.accuracy.figures;
    // Independent figures: every finite x, ŷ = nextUp(RN(y)) taken from the kernel's own
    // output pattern, y from MPFR at 256 bits, error |ŷ − y| / ulp(y) in 256-bit arithmetic.
    let mut max = Float::with_val(256, 0);
    let mut worst = 0u32;
    let mut sum = Float::with_val(256, 0);
    let mut n = 0u64;
    for x in 0u32..65536 {
        if matches!(f.classify(x), Class::Nan | Class::Infinite) {
            continue;
        }
        let rn = table[x as usize];
        let out = f.next_up(rn);
        let err = error_ulps(f.to_f64(x), f.to_f64(out));
        if err > max {
            max = err.clone();
            worst = x;
        }
        sum += &err;
        n += 1;
    }
    assert_eq!(acc.points, n);
    // ulpgauge keeps y to binary64 precision (2^−53 relative, under 2^−42 ulp of binary16).
    assert!(
        (acc.max_ulp - max.to_f64()).abs() <= 1e-12,
        "{} vs {}",
        acc.max_ulp,
        max
    );
    let w = acc.worst.as_ref().unwrap();
    assert_eq!(w.input.bits, format!("0x{worst:04x}"));
    // The worst output is exactly one representable step above RN(y).
    let parse = |s: &str| u32::from_str_radix(&s[2..], 16).unwrap();
    assert_eq!(parse(&w.output.bits), f.next_up(parse(&w.reference.bits)));
    let mean = (sum / n).to_f64();
    assert!(
        (acc.mean_ulp - mean).abs() <= 1e-12,
        "{} vs {mean}",
        acc.mean_ulp
    );
    // nextUp of RN(y) is never RN(y), and is faithful only when y lies above RN(y).
    assert_eq!(acc.correctly_rounded, 0.0);
    assert!(acc.faithful < 1.0);
    // |nextUp(RN(y)) − y| ≤ one step above RN(y) plus |RN(y) − y|: at most 2·ulp(y) + ulp(y)/2
    // where the step above RN(y) = 2^k is twice ulp(y) (y just below 2^k).
    assert!(acc.max_ulp > 0.5 && acc.max_ulp <= 2.5);
}
