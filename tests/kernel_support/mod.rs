//! Shared by the kernel tests: builds the demo kernels once per test binary and makes inputs.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use std::time::Duration;
use ulpgauge::kernel::{KernelRole, KernelSpec, ParamPassing, Runner, RunnerOptions};

/// Runs kernels-under-test/build.sh into a directory of this test binary; returns it.
pub fn kernels() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        std::env::set_var("ULPGAUGE_WORKER_EXE", env!("CARGO_BIN_EXE_ulpgauge"));
        let out =
            Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("lumen-{}", std::process::id()));
        let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("kernels-under-test/build.sh");
        let status = std::process::Command::new("bash")
            .arg(&script)
            .arg(&out)
            .stdout(std::process::Stdio::null())
            .status()
            .expect("run build.sh");
        assert!(status.success(), "build.sh failed");
        out
    })
}

/// A spec for one demo kernel.
pub fn spec(lib: &str, symbol: &str, function: &str, format: &str) -> KernelSpec {
    KernelSpec {
        library: kernels().join(lib),
        symbol: symbol.to_string(),
        function: function.to_string(),
        format: ulpgauge::format::by_name(format).expect("format"),
        input_format: ulpgauge::format::by_name(format).expect("format"),
        role: KernelRole::Forward,
        params: Vec::new(),
        param_passing: ParamPassing::Baked,
        in_place: false,
        thread_safe: true,
        signature: ulpgauge::kernel::Signature::Contiguous,
    }
}

/// Options with a short timeout, for tests.
pub fn options() -> RunnerOptions {
    RunnerOptions {
        batch_timeout: Duration::from_secs(5),
        stop_on_crash: false,
        batch_size: 4096,
        ..RunnerOptions::default()
    }
}

/// Starts a runner or panics with the one-line error.
pub fn runner(spec: &KernelSpec) -> Runner {
    Runner::start(spec, options()).unwrap_or_else(|e| panic!("start {}: {e}", spec.symbol))
}

/// A spread of f32 patterns: every sign, binade and special class, plus pseudo-random bits.
pub fn f32_sample(count: usize) -> Vec<u32> {
    let mut v = vec![
        0,
        0x8000_0000,
        1,
        0x8000_0001,
        0x007f_ffff,
        0x0080_0000,
        0x3f80_0000,
        0xbf80_0000,
        0x7f7f_ffff,
        0xff7f_ffff,
        0x7f80_0000,
        0xff80_0000,
        0x7fc0_0000,
        0xffc0_0000,
    ];
    let mut s: u64 = 0x9e37_79b9_7f4a_7c15;
    while v.len() < count {
        s = s
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let bits = (s >> 32) as u32;
        // Bias towards |x| < 32, where activations are interesting.
        v.push(if s & 1 == 0 {
            bits
        } else {
            (bits & 0x81ff_ffff) | 0x3e00_0000
        });
    }
    v
}

/// Every 16-bit pattern.
pub fn all16() -> Vec<u32> {
    (0..=0xffffu32).collect()
}

/// A JSON check report without what legitimately differs between runs of the same check:
/// timings, the provenance (date, host, confirmations), and how many rounds the determinism
/// check fitted into its time budget.
pub fn comparable(report: &serde_json::Value) -> serde_json::Value {
    let mut r = report.clone();
    let map = r.as_object_mut().expect("a report object");
    map.remove("provenance");
    // A pair check's wall time.
    map.remove("seconds");
    if let Some(kernel) = map.get_mut("kernel").and_then(|k| k.as_object_mut()) {
        kernel.remove("ns_per_element");
    }
    if let Some(list) = map.get_mut("hygiene").and_then(|h| h.as_array_mut()) {
        for h in list {
            if h["check"] == "determinism" {
                h.as_object_mut().expect("an entry").remove("detail");
            }
        }
    }
    r
}
