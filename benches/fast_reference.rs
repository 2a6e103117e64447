//! Fast reference path against MPFR-only, on the 2^23 binary32 inputs of [1, 2) (run:
//! `cargo bench --bench fast_reference [function]`).  The fast column counts the MPFR fallback
//! for undecided inputs.  MPFR-only runs on every STRIDE-th input (env `BENCH_STRIDE`, default
//! 8) to keep the run short; rates are per point, so they compare directly.
//!
//! A second table samples the whole binary32 domain (every DOMAIN_STRIDE-th bit pattern of
//! the 2^32, NaNs, infinities and zeros included, one thread, best of REPEAT runs), where the
//! saturated tails and the tiny inputs dominate.  `BENCH_PART=binade` or `BENCH_PART=domain` runs one table only.
//!
//! `BENCH_PART=binades` instead prints, per function (forward), the one-thread cost of a fast
//! reference (MPFR fallback included) in every binary32 binade of either sign (every 97th
//! pattern), the binades above 60 ns (env `BENCH_OVER`), and the sum over all 2^32 patterns:
//! where the time of an exhaustive sweep goes.

use rayon::prelude::*;
use std::time::Instant;
use ulpgauge::activation::{lookup, Constants, Role};
use ulpgauge::format::Binary32;
use ulpgauge::reference::fast::FastEvaluator;
use ulpgauge::reference::{Evaluator, ParamRounding};

fn rate(points: usize, f: impl FnOnce() -> u64) -> f64 {
    let start = Instant::now();
    std::hint::black_box(f());
    points as f64 / start.elapsed().as_secs_f64()
}

/// The functions with a fast path (SELU with its constants rounded to binary32).
const FUNCTIONS: [&str; 18] = [
    "sigmoid",
    "tanh",
    "swish",
    "elu",
    "gelu",
    "softplus",
    "log-sigmoid",
    "mish",
    "selu",
    "celu",
    "gelu-tanh",
    "step",
    "relu",
    "leaky-relu",
    "relu6",
    "hard-sigmoid",
    "hard-swish",
    "softsign",
];

/// Stride of the whole-domain sample: a prime, so every exponent and low-bit pattern is hit.
const DOMAIN_STRIDE: u64 = 4093;

/// Runs per whole-domain measurement; the best is reported.
const REPEAT: usize = 5;

fn evaluator(name: &str, role: Role) -> Evaluator<'static> {
    let f = lookup(name).unwrap();
    let rounding = if name == "selu" {
        ParamRounding::F32
    } else {
        ParamRounding::Exact
    };
    Evaluator::new(
        f,
        role,
        // SELU's published constants are decimals: its fast path needs them rounded.
        Constants::resolve(f, &[], rounding, &Binary32),
        &Binary32,
    )
}

fn role_name(role: Role) -> &'static str {
    if role == Role::Forward {
        "forward"
    } else {
        "derivative"
    }
}

/// Fast references (MPFR fallback included) per second over every DOMAIN_STRIDE-th pattern.
fn domain(filter: Option<&str>) {
    let sample: Vec<u32> = (0..1u64 << 32)
        .step_by(DOMAIN_STRIDE as usize)
        .map(|b| b as u32)
        .collect();
    println!(
        "whole binary32 domain, every {DOMAIN_STRIDE}-th pattern ({} inputs), one thread",
        sample.len()
    );
    println!(
        "{:<11} {:<10} {:>12} {:>9}",
        "function", "role", "fast/s 1t", "decided"
    );
    for name in FUNCTIONS {
        if filter.is_some_and(|n| n != name) {
            continue;
        }
        for role in [Role::Forward, Role::Derivative] {
            let e = evaluator(name, role);
            let fast = FastEvaluator::new(&e).expect("fast path");
            let mut decided = 0u64;
            // Best of REPEAT runs: a run is short, and the machine may be shared.
            let r = (0..REPEAT)
                .map(|_| {
                    decided = 0;
                    rate(sample.len(), || {
                        let mut s = 0u64;
                        for &x in &sample {
                            let b = match fast.try_reference(x) {
                                Some(r) => {
                                    decided += 1;
                                    r.bits
                                }
                                None => e.reference(x).unwrap().bits,
                            };
                            s = s.wrapping_add(b as u64);
                        }
                        s
                    })
                })
                .fold(0.0, f64::max);
            println!(
                "{:<11} {:<10} {:>12.0} {:>8.4}%",
                name,
                role_name(role),
                r,
                100.0 * decided as f64 / sample.len() as f64
            );
        }
    }
}

/// Stride of the per-binade sample.
const BINADE_STRIDE: usize = 97;

/// One-thread cost per binade of the fast path (MPFR fallback included), forward unless
/// BENCH_ROLE=derivative.
fn binades(filter: Option<&str>) {
    for name in FUNCTIONS {
        if filter.is_some_and(|n| n != name) {
            continue;
        }
        // BENCH_ROLE=derivative times the derivative instead.
        let role = match std::env::var("BENCH_ROLE").as_deref() {
            Ok("derivative") => Role::Derivative,
            _ => Role::Forward,
        };
        let e = evaluator(name, role);
        let fast = FastEvaluator::new(&e).expect("fast path");
        let mut total = 0.0;
        let mut costly = Vec::new();
        let over: f64 = std::env::var("BENCH_OVER")
            .ok()
            .and_then(|s| s.parse().ok())
            .unwrap_or(60.0);
        for sign in [0u32, 0x8000_0000] {
            for field in 0u32..255 {
                let base = sign | field << 23;
                // One input per 2^13 first: GELU's Mills-ratio cells are built on first use,
                // once per sweep, which a sample of every 97th input would overweight.
                for m in (0..1u32 << 23).step_by(1 << 13) {
                    std::hint::black_box(fast.try_reference(base | m));
                }
                let start = Instant::now();
                let mut n = 0u64;
                for m in (0..1u32 << 23).step_by(BINADE_STRIDE) {
                    n += 1;
                    let x = base | m;
                    let r = fast
                        .try_reference(x)
                        .unwrap_or_else(|| e.reference(x).unwrap());
                    std::hint::black_box(r);
                }
                let ns = start.elapsed().as_nanos() as f64 / n as f64;
                total += ns * (1u64 << 23) as f64;
                if ns > over {
                    let label = if field == 0 {
                        "subnormal".to_string()
                    } else {
                        format!("2^{}", field as i32 - 127)
                    };
                    costly.push(format!(
                        "{}{label} {ns:.0}",
                        if sign == 0 { "+" } else { "-" }
                    ));
                }
            }
        }
        println!(
            "{name:<11} all 2^32 patterns, one thread: {:.1} s; binades over {over} ns/point: {}",
            total * 1e-9,
            costly.join(", ")
        );
    }
}

/// One-thread ns per fast reference (MPFR fallback included) over every binary32 input of
/// [BENCH_LO, BENCH_HI) (default [1, 2)), BENCH_REPEAT times (default 3, best reported), for
/// one function and BENCH_ROLE: a short loop to profile or to compare two builds.
fn range(filter: Option<&str>) {
    let bound = |key: &str, default: f32| -> f32 {
        std::env::var(key)
            .ok()
            .and_then(|s| s.parse().ok())
            .unwrap_or(default)
    };
    let (lo, hi) = (bound("BENCH_LO", 1.0), bound("BENCH_HI", 2.0));
    let repeat = bound("BENCH_REPEAT", 3.0) as usize;
    let role = match std::env::var("BENCH_ROLE").as_deref() {
        Ok("derivative") => Role::Derivative,
        _ => Role::Forward,
    };
    // Ordered by value: negative bounds walk the sign-magnitude patterns downwards.
    let inputs: Vec<u32> = if lo >= 0.0 {
        (lo.to_bits()..hi.to_bits()).collect()
    } else if hi <= 0.0 {
        ((-hi).to_bits() + 1..=(-lo).to_bits())
            .map(|m| m | 0x8000_0000)
            .collect()
    } else {
        panic!("BENCH_LO and BENCH_HI must not straddle 0");
    };
    let name = filter.unwrap_or("swish");
    let e = evaluator(name, role);
    let fast = FastEvaluator::new(&e).expect("fast path");
    let best = (0..repeat.max(1))
        .map(|_| {
            let start = Instant::now();
            let mut s = 0u64;
            for &x in &inputs {
                let r = fast
                    .try_reference(x)
                    .unwrap_or_else(|| e.reference(x).unwrap());
                s = s.wrapping_add(r.bits as u64 ^ r.exact.map_or(0, |v| v.approx.to_bits()));
            }
            std::hint::black_box(s);
            start.elapsed().as_secs_f64()
        })
        .fold(f64::INFINITY, f64::min);
    println!(
        "{name} {} [{lo}, {hi}): {} inputs, {:.1} ns per reference (one thread, best of {repeat})",
        role_name(role),
        inputs.len(),
        best * 1e9 / inputs.len() as f64
    );
}

fn main() {
    let filter = std::env::args().nth(1).filter(|a| !a.starts_with('-'));
    let part = std::env::var("BENCH_PART").unwrap_or_default();
    if part == "binades" {
        binades(filter.as_deref());
        return;
    }
    if part == "range" {
        range(filter.as_deref());
        return;
    }
    if part != "binade" {
        domain(filter.as_deref());
    }
    if part == "domain" {
        return;
    }
    let stride: usize = std::env::var("BENCH_STRIDE")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(8);
    let all: Vec<u32> = (1.0f32.to_bits()..2.0f32.to_bits()).collect();
    let sub: Vec<u32> = all.iter().copied().step_by(stride).collect();
    println!(
        "{:<11} {:<10} {:>12} {:>12} {:>7} {:>12} {:>12} {:>7} {:>9}",
        "function",
        "role",
        "fast/s 1t",
        "mpfr/s 1t",
        "ratio",
        "fast/s par",
        "mpfr/s par",
        "ratio",
        "decided"
    );
    for name in FUNCTIONS {
        if filter.as_deref().is_some_and(|n| n != name) {
            continue;
        }
        for role in [Role::Forward, Role::Derivative] {
            let e = evaluator(name, role);
            let fast = FastEvaluator::new(&e).expect("fast path");
            let one = |x: u32| match fast.try_reference(x) {
                Some(r) => (r.bits as u64, 1u64),
                None => (e.reference(x).unwrap().bits as u64, 0),
            };
            let mut decided = 0u64;
            let fast_1t = rate(all.len(), || {
                let mut s = 0u64;
                for &x in &all {
                    let (b, d) = one(x);
                    s = s.wrapping_add(b);
                    decided += d;
                }
                s
            });
            let mpfr_1t = rate(sub.len(), || {
                sub.iter()
                    .map(|&x| e.reference(x).unwrap().bits as u64)
                    .sum()
            });
            let fast_par = rate(all.len(), || all.par_iter().map(|&x| one(x).0).sum());
            let mpfr_par = rate(sub.len(), || {
                sub.par_iter()
                    .map(|&x| e.reference(x).unwrap().bits as u64)
                    .sum()
            });
            println!(
                "{:<11} {:<10} {:>12.0} {:>12.0} {:>6.1}x {:>12.0} {:>12.0} {:>6.1}x {:>8.4}%",
                name,
                role_name(role),
                fast_1t,
                mpfr_1t,
                fast_1t / mpfr_1t,
                fast_par,
                mpfr_par,
                fast_par / mpfr_par,
                100.0 * decided as f64 / all.len() as f64
            );
        }
    }
}
