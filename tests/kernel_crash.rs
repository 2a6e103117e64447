//! Crashes and hangs: pinned to the exact input by bisection, the test process survives, the
//! remaining inputs are still computed.

mod kernel_support;

use kernel_support::*;
use std::time::{Duration, Instant};
use ulpgauge::kernel::{Runner, RunnerOptions};

#[test]
fn crash_is_pinned_to_its_input_and_the_rest_is_computed() {
    let s = spec("liblumen_faulty.so", "lumen_tanh_f16_crash", "tanh", "f16");
    let mut r = runner(&s);
    let x = all16();
    let out = r.run(&x, None);
    assert_eq!(out.crashes.len(), 1, "{:?}", out.crashes);
    let c = &out.crashes[0];
    // 9.0 in binary16 is 0x4880 (IEEE 754 binary16: exponent 3+15=18, fraction 1/8).
    assert_eq!(
        (c.input, c.index, c.signal.as_str()),
        (0x4880, 0x4880, "SIGSEGV")
    );
    assert_eq!(out.outputs[0x4880], None);
    assert_eq!(out.outputs.iter().filter(|o| o.is_some()).count(), 65535);
    // Output of a neighbour: tanh(1.0) = 0.76159… rounds to 0x3a18 in binary16 (half crate).
    assert_eq!(
        out.outputs[0x3c00],
        Some(half::f16::from_f32(1.0f32.tanh()).to_bits() as u32)
    );
    // Hygiene still gives six booleans; the crashing input is left out of the sample.
    let checks = ulpgauge::kernel::hygiene::run_checks(&mut r, &x, None);
    assert_eq!(checks.len(), 6);
    assert!(checks.iter().all(|c| c.passed), "{checks:?}");
    assert!(checks[0]
        .detail
        .contains("1 sample input(s) that crash or hang"));
}

#[test]
fn stop_on_crash_stops() {
    let s = spec("liblumen_faulty.so", "lumen_tanh_f16_crash", "tanh", "f16");
    let mut r = Runner::start(
        &s,
        RunnerOptions {
            stop_on_crash: true,
            ..options()
        },
    )
    .unwrap();
    let out = r.run(&all16(), None);
    assert_eq!(out.crashes.len(), 1);
    assert!(out.outputs[..0x4880].iter().all(|o| o.is_some()));
    assert!(out.outputs[0x4880..].iter().all(|o| o.is_none()));
}

#[test]
fn hang_is_pinned_to_its_input() {
    let s = spec(
        "liblumen_faulty.so",
        "lumen_sigmoid_f32_hang",
        "sigmoid",
        "f32",
    );
    let mut r = Runner::start(
        &s,
        RunnerOptions {
            batch_timeout: Duration::from_millis(250),
            stop_on_crash: false,
            batch_size: 512,
            ..RunnerOptions::default()
        },
    )
    .unwrap();
    let mut x = f32_sample(1500);
    x.retain(|&b| b != 0x7f80_0000);
    x.insert(777, 0x7f80_0000); // +inf
    let t = Instant::now();
    let out = r.run(&x, None);
    assert_eq!(out.crashes.len(), 1, "{:?}", out.crashes);
    assert_eq!(
        (
            out.crashes[0].input,
            out.crashes[0].index,
            out.crashes[0].signal.as_str()
        ),
        (0x7f80_0000, 777, "hang")
    );
    assert_eq!(out.outputs.iter().filter(|o| o.is_none()).count(), 1);
    assert!(t.elapsed() < Duration::from_secs(20));
}

#[test]
fn every_fatal_signal_is_survived() {
    // Each kernel is a few lines of C compiled here: SIGSEGV, SIGBUS-free platforms aside, these
    // are the signals a kernel can die of.
    let dir = kernels();
    let src = dir.join("signals.c");
    std::fs::write(
        &src,
        r#"#include <stddef.h>
#include <signal.h>
#include <stdlib.h>
void die_abort(const float *x, float *y, size_t n) { for (size_t i = 0; i < n; i++) { if (x[i] == 2.0f) abort(); y[i] = x[i]; } }
void die_ill(const float *x, float *y, size_t n) { for (size_t i = 0; i < n; i++) { if (x[i] == 2.0f) __builtin_trap(); y[i] = x[i]; } }
void die_fpe(const float *x, float *y, size_t n) { for (size_t i = 0; i < n; i++) { volatile int d = x[i] == 2.0f ? 0 : 1; y[i] = x[i] + 0.0f * (float)(7 / d); } }
void die_bus(const float *x, float *y, size_t n) { for (size_t i = 0; i < n; i++) { if (x[i] == 2.0f) raise(SIGBUS); y[i] = x[i]; } }
"#,
    )
    .unwrap();
    let lib = dir.join("libsignals.so");
    let ok = std::process::Command::new(std::env::var("CC").unwrap_or("cc".into()))
        .args(["-O1", "-shared", "-fPIC", "-o"])
        .arg(&lib)
        .arg(&src)
        .status()
        .unwrap()
        .success();
    assert!(ok);
    let x: Vec<u32> = [0.5f32, 1.0, 2.0, 3.0]
        .iter()
        .map(|v| v.to_bits())
        .collect();
    for (sym, sig) in [
        ("die_abort", "SIGABRT"),
        (
            "die_ill",
            if cfg!(target_arch = "x86_64") {
                "SIGILL"
            } else {
                "SIGTRAP"
            },
        ),
        ("die_fpe", "SIGFPE"),
        ("die_bus", "SIGBUS"),
    ] {
        let s = spec("libsignals.so", sym, "relu", "f32");
        let mut r = runner(&s);
        let out = r.run(&x, None);
        assert_eq!(out.crashes.len(), 1, "{sym}");
        assert_eq!(
            (out.crashes[0].index, out.crashes[0].signal.as_str()),
            (2, sig),
            "{sym}"
        );
        assert_eq!(out.outputs[3], Some(3.0f32.to_bits()));
    }
}

/// With two worker processes, the calls are shared while the kernel behaves; a crash in the
/// partner's share is pinned by the main runner exactly as with one worker, and sharing ends.
#[test]
fn crash_in_a_partner_share_is_pinned_as_with_one_worker() {
    let s = spec("liblumen_faulty.so", "lumen_tanh_f16_crash", "tanh", "f16");
    // Rotated so that the crashing input falls in the second share of a paired call (with
    // batches of 4096 after a 256-input calibration call, index 14464 lies in [12544, 16640)).
    let mut x = all16();
    x.rotate_left(4096);
    let crash_at = x.iter().position(|&b| b == 0x4880).unwrap();
    assert_eq!(crash_at, 14464);
    let (alone, shared_alone) = run_with_workers(&s, 1, &x);
    let (paired, shared) = run_with_workers(&s, 2, &x);
    assert_eq!(shared_alone, 0);
    // One partner call returns before the one that crashes (the partner takes every second
    // call of 4096 from index 256: [4352, 8448) returns, [12544, 16640) crashes, and its later
    // calls are answered as failed and made by the main runner); after the crash nothing is
    // shared.
    assert_eq!(shared, 1, "calls answered by the partner");
    assert_eq!(paired.crashes, alone.crashes);
    assert_eq!(
        paired.crashes.iter().map(|c| c.index).collect::<Vec<_>>(),
        [crash_at]
    );
    assert_eq!(paired.outputs, alone.outputs);
}

/// A kernel's outputs do not depend on how many worker processes share the calls: not even
/// those of a kernel with a ragged-tail bug (its outputs depend on where each call ends) or one
/// that keeps state in a global scratch buffer (not thread-safe), since shares are whole calls
/// in separate processes.
#[test]
fn more_workers_give_the_outputs_of_one() {
    // Values in [1, 2), where the ragged tail's approximation differs from σ at every input.
    let dense: Vec<u32> = (0x3f80_0000..0x3f80_0000 + 20_003).collect();
    let cases = [
        (
            spec("liblumen_edge.so", "lumen_elu_f16", "elu", "f16"),
            all16(),
        ),
        (
            spec(
                "liblumen_faulty.so",
                "lumen_sigmoid_f32_ragged",
                "sigmoid",
                "f32",
            ),
            dense,
        ),
        (
            spec(
                "liblumen_faulty.so",
                "lumen_sigmoid_f32_scratch",
                "sigmoid",
                "f32",
            ),
            f32_sample(20_003),
        ),
    ];
    for (s, x) in cases {
        let mut outputs = Vec::new();
        for workers in [1, 2, 3] {
            let (out, shared) = run_with_workers(&s, workers, &x);
            assert!(out.crashes.is_empty(), "{}: {:?}", s.symbol, out.crashes);
            assert_eq!(shared > 0, workers > 1, "{workers} workers");
            outputs.push(out.outputs);
        }
        for (k, other) in outputs.iter().enumerate().skip(1) {
            let differ = outputs[0].iter().zip(other).position(|(a, b)| a != b);
            assert_eq!(differ, None, "{}: {} workers", s.symbol, k + 1);
        }
    }
}

/// Runs `x` through a fresh runner with `workers` worker processes: the outcome and the calls
/// its partners answered.
fn run_with_workers(
    s: &ulpgauge::kernel::KernelSpec,
    workers: usize,
    x: &[u32],
) -> (ulpgauge::kernel::RunOutcome, u64) {
    let mut r = Runner::start(
        s,
        RunnerOptions {
            workers,
            ..options()
        },
    )
    .unwrap();
    let out = r.run(x, None);
    (out, r.shared_calls)
}
