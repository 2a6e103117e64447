//! Per-element cost of running a kernel in the worker process versus calling it directly.
//!
//! `cargo bench --bench worker_overhead`: builds the demo kernels, then times
//! `lumen_sigmoid_f32` on 2^20 inputs (a) called in this process through libloading and (b)
//! through `Runner::run` (pipes, batches of 4096).  The difference is the worker's overhead.

use std::path::Path;
use std::time::Instant;
use ulpgauge::kernel::{KernelRole, KernelSpec, ParamPassing, Runner, RunnerOptions};

fn main() {
    std::env::set_var("ULPGAUGE_WORKER_EXE", env!("CARGO_BIN_EXE_ulpgauge"));
    let out = Path::new(env!("CARGO_MANIFEST_DIR")).join("target/bench-kernels");
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("kernels-under-test/build.sh");
    assert!(std::process::Command::new("bash")
        .arg(script)
        .arg(&out)
        .status()
        .expect("build.sh")
        .success());
    let lib = out.join("liblumen_edge.so");
    let n = 1 << 20;
    let x: Vec<u32> = (0..n as u32)
        .map(|i| (i.wrapping_mul(2654435761) & 0x41ff_ffff) | 0x3000_0000)
        .collect();
    let xf: Vec<f32> = x.iter().map(|&b| f32::from_bits(b)).collect();
    let rounds = 7;

    for symbol in ["lumen_sigmoid_f32", "lumen_sigmoid_f32_simd"] {
        // (a) direct
        // SAFETY: a demo kernel of this repository, with the documented f32 signature.
        let library = unsafe { libloading::Library::new(&lib) }.expect("load");
        let f: libloading::Symbol<unsafe extern "C" fn(*const f32, *mut f32, usize)> =
            unsafe { library.get(symbol.as_bytes()) }.expect("symbol");
        let mut y = vec![0f32; n];
        let mut direct = f64::INFINITY;
        for _ in 0..rounds {
            let t = Instant::now();
            for (xc, yc) in xf.chunks(4096).zip(y.chunks_mut(4096)) {
                unsafe { f(xc.as_ptr(), yc.as_mut_ptr(), xc.len()) };
            }
            direct = direct.min(t.elapsed().as_nanos() as f64 / n as f64);
        }
        // (b) worker
        let spec = KernelSpec {
            library: lib.clone(),
            symbol: symbol.into(),
            function: "sigmoid".into(),
            format: ulpgauge::format::by_name("f32").unwrap(),
            input_format: ulpgauge::format::by_name("f32").unwrap(),
            role: KernelRole::Forward,
            params: vec![],
            param_passing: ParamPassing::Baked,
            in_place: false,
            thread_safe: true,
            signature: ulpgauge::kernel::Signature::Contiguous,
        };
        let mut runner = Runner::start(
            &spec,
            RunnerOptions {
                batch_size: std::env::var("BATCH")
                    .ok()
                    .and_then(|b| b.parse().ok())
                    .unwrap_or(4096),
                ..RunnerOptions::default()
            },
        )
        .expect("start");
        let mut worker = f64::INFINITY;
        for _ in 0..rounds {
            let t = Instant::now();
            let o = runner.run(&x, None);
            assert!(o.crashes.is_empty());
            worker = worker.min(t.elapsed().as_nanos() as f64 / n as f64);
        }
        let inside = runner.ns_per_element(&x[..4096], None).unwrap();
        println!(
            "{symbol}: direct {direct:.2} ns/element, through the worker {worker:.2} ns/element, overhead {:.2} ns/element (kernel timed inside the worker: {inside:.2} ns/element)",
            worker - direct
        );
    }
}
