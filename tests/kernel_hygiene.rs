//! Hygiene verdicts of every demo kernel: clean kernels pass all six checks, each faulty kernel
//! fails its own check (and only that one), naming where.

mod kernel_support;

use kernel_support::*;
use ulpgauge::kernel::{load_manifest, HygieneCheck, KernelSpec};

fn verdicts(spec: &KernelSpec) -> Vec<HygieneCheck> {
    let mut r = runner(spec);
    let sample = if spec.format.width() == 32 {
        f32_sample(20_000)
    } else {
        all16()
    };
    let g = spec.role.takes_gradient().then(|| {
        // g: the sample reversed, so each x meets a different g.
        sample.iter().rev().copied().collect::<Vec<u32>>()
    });
    let checks = ulpgauge::kernel::hygiene::run_checks(&mut r, &sample, g.as_deref());
    let names: Vec<_> = checks.iter().map(|c| c.check).collect();
    assert_eq!(
        names,
        [
            "tail",
            "alignment",
            "bounds",
            "input-untouched",
            "fp-environment",
            "determinism"
        ]
    );
    checks
}

/// Asserts that exactly `failing` fails and returns its detail.
fn only_fails(spec: &KernelSpec, failing: &str) -> String {
    let checks = verdicts(spec);
    for c in &checks {
        assert_eq!(c.passed, c.check != failing, "{}: {:?}", spec.symbol, c);
        assert!(!c.detail.is_empty() && !c.detail.contains('\n'));
    }
    checks
        .iter()
        .find(|c| c.check == failing)
        .unwrap()
        .detail
        .clone()
}

#[test]
fn every_manifest_kernel_passes_all_six() {
    let dir = kernels();
    // The shipped manifest points at kernels-under-test/build; rewrite it to this build.
    let text = std::fs::read_to_string(
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("kernels-under-test/lumen-edge.toml"),
    )
    .unwrap()
    .replace("\"build/", &format!("\"{}/", dir.display()));
    let path = dir.join("lumen-edge.toml");
    std::fs::write(&path, text).unwrap();
    let specs = load_manifest(&path).expect("manifest");
    assert_eq!(specs.len(), 12);
    for spec in &specs {
        for c in verdicts(spec) {
            assert!(c.passed, "{} {}: {}", spec.symbol, c.check, c.detail);
        }
    }
    let json = serde_json::to_value(verdicts(&specs[0])).unwrap();
    assert_eq!(json[0]["check"], "tail");
    assert_eq!(json[0]["passed"], true);
    assert!(json[0]["detail"].is_string());
}

#[test]
fn ragged_tail_fails_tail() {
    let d = only_fails(
        &spec(
            "liblumen_faulty.so",
            "lumen_sigmoid_f32_ragged",
            "sigmoid",
            "f32",
        ),
        "tail",
    );
    // Blocks of 8 in the kernel: every n < 8 is all tail, so the first failing n is below 8
    // (the first few sample inputs are zeros and tiny values, where both formulas give 0.5).
    let n: usize = d
        .strip_prefix("n=")
        .and_then(|r| r.split(',').next())
        .unwrap()
        .parse()
        .unwrap();
    assert!(
        n < 8 && d.contains(", position ") && d.ends_with("in the bulk run"),
        "{d}"
    );
}

#[test]
fn aligned_load_assumption_fails_alignment() {
    let d = only_fails(
        &spec(
            "liblumen_faulty.so",
            "lumen_sigmoid_f32_aligned",
            "sigmoid",
            "f32",
        ),
        "alignment",
    );
    // The first misaligned x is byte offset 4.
    assert!(
        d.starts_with("x at byte offset 4, y at byte offset 4 (n=67)"),
        "{d}"
    );
}

#[test]
fn overrun_fails_bounds_without_crashing() {
    let s = spec(
        "liblumen_faulty.so",
        "lumen_sigmoid_f32_overrun",
        "sigmoid",
        "f32",
    );
    let d = only_fails(&s, "bounds");
    // n = 1 stores a whole block of 4: the first stray write is y[1], byte offset 4.
    assert_eq!(
        d,
        "n=1: a write at byte offset 4 from y[0] (0 bytes past the end of y[0..n)) touched the guard page"
    );
    // The sweep's own buffers are padded: every input still gets an output, no crash.
    let mut r = runner(&s);
    let x = f32_sample(1001);
    let out = r.run(&x, None);
    assert!(out.crashes.is_empty());
    for (xi, yi) in x.iter().zip(&out.outputs) {
        let v = f32::from_bits(*xi);
        // glibc expf via Rust's f32::exp, the same formula as the kernel.
        let want = 1.0f32 / (1.0 + (-v).exp());
        assert_eq!(
            yi.map(f32::from_bits).map(f32::to_bits),
            Some(want.to_bits())
        );
    }
}

#[test]
fn writing_x_fails_input_untouched() {
    let d = only_fails(
        &spec(
            "liblumen_faulty.so",
            "lumen_sigmoid_f32_scratch",
            "sigmoid",
            "f32",
        ),
        "input-untouched",
    );
    assert!(d.starts_with("n=1: x[0] changed from 0x"), "{d}");
}

#[test]
fn load_time_ftz_fails_fp_environment() {
    let d = only_fails(
        &spec(
            "liblumen_fastmath.so",
            "lumen_sigmoid_f32_fast",
            "sigmoid",
            "f32",
        ),
        "fp-environment",
    );
    if cfg!(target_arch = "x86_64") {
        // MXCSR after reset is 0x1f80 (Intel SDM vol. 1 §10.2.3, from memory); FTZ is bit 15 and
        // DAZ bit 6, so the constructor's OR with 0x8040 gives 0x9fc0.
        assert_eq!(
            d,
            "loading the library changed it: FTZ on, DAZ on (MXCSR 0x1f80 -> 0x9fc0)"
        );
    }
}

#[test]
fn shared_scratch_fails_determinism_unless_declared_thread_unsafe() {
    let mut s = spec("liblumen_faulty.so", "lumen_tanh_f32_shared", "tanh", "f32");
    let d = only_fails(&s, "determinism");
    assert!(d.starts_with("concurrent calls differ: thread "), "{d}");
    s.thread_safe = false;
    let checks = verdicts(&s);
    assert!(checks.iter().all(|c| c.passed), "{checks:?}");
    assert!(checks[5].detail.contains("declared not thread-safe"));
}
