//! Reference throughput per function, format and role (run: `cargo bench --bench
//! reference_throughput`). Single-threaded, so figures compare across machines with any core
//! count; the sweep itself runs on every core through rayon.

use std::time::Instant;
use ulpgauge::activation::{catalog, Constants, Role};
use ulpgauge::format::{Bfloat16, Binary16, Binary32, Format};
use ulpgauge::reference::{Evaluator, ParamRounding};

/// 2^16 binary32 inputs evenly spread over [−16, 16): the region kernels are usually tested on.
fn f32_inputs() -> Vec<u32> {
    (0..65536)
        .map(|i| (-16.0f32 + i as f32 * (32.0 / 65536.0)).to_bits())
        .collect()
}

fn main() {
    let filter = std::env::args().nth(1).filter(|a| !a.starts_with('-'));
    let sixteen: Vec<u32> = (0..65536).collect();
    let f32_in = f32_inputs();
    println!(
        "{:<14} {:<6} {:<10} {:>12} {:>10}",
        "function", "format", "role", "refs/s", "ns/ref"
    );
    for f in catalog() {
        if filter.as_deref().is_some_and(|name| name != f.name()) {
            continue;
        }
        for (format, inputs) in [
            (&Binary32 as &'static dyn Format, &f32_in),
            (&Binary16, &sixteen),
            (&Bfloat16, &sixteen),
        ] {
            for role in [Role::Forward, Role::Derivative] {
                let e = Evaluator::new(
                    *f,
                    role,
                    Constants::resolve(*f, &[], ParamRounding::Exact, format),
                    format,
                );
                let start = Instant::now();
                let mut checksum = 0u64;
                for &x in inputs.iter() {
                    checksum = checksum.wrapping_add(e.reference(x).unwrap().bits as u64);
                }
                let seconds = start.elapsed().as_secs_f64();
                std::hint::black_box(checksum);
                let role = if role == Role::Forward {
                    "forward"
                } else {
                    "derivative"
                };
                println!(
                    "{:<14} {:<6} {:<10} {:>12.0} {:>10.0}",
                    f.name(),
                    format.name(),
                    role,
                    inputs.len() as f64 / seconds,
                    seconds * 1e9 / inputs.len() as f64
                );
            }
        }
    }
}
