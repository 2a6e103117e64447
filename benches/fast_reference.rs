//! Fast reference path against MPFR-only, on the 2^23 binary32 inputs of [1, 2) (run:
//! `cargo bench --bench fast_reference [function]`).  The fast column counts the MPFR fallback
//! for undecided inputs.  MPFR-only runs on every STRIDE-th input (env `BENCH_STRIDE`, default
//! 8) to keep the run short; rates are per point, so they compare directly.

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

fn main() {
    let filter = std::env::args().nth(1).filter(|a| !a.starts_with('-'));
    let stride: usize = std::env::var("BENCH_STRIDE")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(8);
    let all: Vec<u32> = (1.0f32.to_bits()..2.0f32.to_bits()).collect();
    let sub: Vec<u32> = all.iter().copied().step_by(stride).collect();
    println!(
        "{:<8} {:<10} {:>12} {:>12} {:>7} {:>12} {:>12} {:>7} {:>9}",
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
    for name in ["sigmoid", "tanh", "swish", "elu", "gelu"] {
        if filter.as_deref().is_some_and(|n| n != name) {
            continue;
        }
        let f = lookup(name).unwrap();
        for role in [Role::Forward, Role::Derivative] {
            let e = Evaluator::new(
                f,
                role,
                Constants::resolve(f, &[], ParamRounding::Exact, &Binary32),
                &Binary32,
            );
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
                "{:<8} {:<10} {:>12.0} {:>12.0} {:>6.1}x {:>12.0} {:>12.0} {:>6.1}x {:>8.4}%",
                name,
                if role == Role::Forward {
                    "forward"
                } else {
                    "derivative"
                },
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
