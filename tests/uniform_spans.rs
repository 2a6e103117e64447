//! Fold tasks of a constant-reference span whose kernel outputs are all equal are accumulated
//! at once (`Stream::add_uniform`) instead of point by point: the report, the binade CSV with
//! its listed points and the findings file must be byte for byte those of the point-by-point
//! path (`ULPGAUGE_NO_UNIFORM=1`), for kernels that match the constant reference, miss it by a
//! constant, and vary inside a span (a few wrong, NaN and infinite outputs). The oracle is the
//! point-by-point path of the same program; the thresholds quoted below are binary32 and
//! binary64 arithmetic (IEEE 754), worked out by hand.

mod kernel_support;

use kernel_support::comparable;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;

/// Kernels with known outputs in the saturated tail of σ (σ(x) = 1/(1 + e^−x) rounds to 1 in
/// binary32 once e^−x < 2^−25, x > 17.33; its exact value rounds to 1 in binary64 once
/// e^−x < 2^−54, x > 37.4, and `check` proves one reference per task from x = 38, the fast
/// path's saturated region in DEVELOPERS.md): the constant one ulp low from 17.5 on or on
/// [64, 64.1) only, and σ itself broken at a few scattered inputs.
const TAIL_KERNELS: &str = r#"
#include <math.h>
#include <stdint.h>
#include <string.h>
#include <stddef.h>
void tail_low_sigmoid_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++)
        y[i] = x[i] >= 17.5f ? 0x1.fffffep-1f : 1.0f / (1.0f + expf(-x[i]));
}
void patch_low_sigmoid_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++)
        y[i] = x[i] >= 64.0f && x[i] < 64.1f ? 0x1.fffffep-1f : 1.0f / (1.0f + expf(-x[i]));
}
void spotty_relu_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        uint32_t b;
        memcpy(&b, &x[i], sizeof b);
        float v = x[i] > 0.0f ? x[i] : 0.0f;
        if (b % 40009 == 0) v = nextafterf(v, 0.0f);
        else if (b % 50021 == 0) v = NAN;
        y[i] = v;
    }
}
void spotty_sigmoid_f32(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        uint32_t b;
        memcpy(&b, &x[i], sizeof b);
        float v = 1.0f / (1.0f + expf(-x[i]));
        if (b % 40009 == 0) v = nextafterf(v, 0.0f);
        else if (b % 50021 == 0) v = NAN;
        else if (b % 70001 == 0) v = INFINITY;
        y[i] = v;
    }
}
"#;

/// The directory holding the two test libraries, built once.
fn libraries() -> &'static Path {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    DIR.get_or_init(|| {
        // Sets the worker executable for the runner.
        kernel_support::kernels();
        let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
            .join(format!("uniform-spans-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let tail = dir.join("tail.c");
        std::fs::write(&tail, TAIL_KERNELS).unwrap();
        let floor = Path::new(env!("CARGO_MANIFEST_DIR")).join("benches/floor/libm_kernels.c");
        for (source, lib) in [(tail.as_path(), "libtail.so"), (&floor, "libfloor.so")] {
            let status = Command::new("cc")
                .args(["-O2", "-fPIC", "-shared", "-o"])
                .arg(dir.join(lib))
                .arg(source)
                .arg("-lm")
                .status()
                .expect("run cc");
            assert!(status.success(), "cc {source:?}");
        }
        dir
    })
}

/// How a check lists points over its error limit.
#[derive(Clone, Copy)]
enum Listing {
    /// No limit: accuracy takes a uniform run at once.
    None,
    /// `--csv-points-over 0.5`, no point expected over it (every point still goes one by one).
    Quiet,
    /// `--csv-points-over 0.5` with some points listed.
    Rows,
}

/// The report, binade CSV and findings CSV of one check, with or without uniform tasks.
fn check(
    name: &str,
    lib: &str,
    args: &[&str],
    uniform: bool,
    listing: Listing,
) -> (serde_json::Value, String, String) {
    let dir = libraries();
    let tag = if uniform { "uniform" } else { "points" };
    let (json, csv, findings) = (
        dir.join(format!("{name}-{tag}.json")),
        dir.join(format!("{name}-{tag}.csv")),
        dir.join(format!("{name}-{tag}-findings.csv")),
    );
    let mut command = Command::new(env!("CARGO_BIN_EXE_ulpgauge"));
    command
        .args(["check", "--lib"])
        .arg(dir.join(lib))
        .args(args)
        .args(["--format", "f32", "--quiet", "--no-progress"])
        .arg("--allow-non-finite")
        .arg("--json")
        .arg(&json)
        .arg("--csv")
        .arg(&csv)
        .arg("--findings")
        .arg(&findings);
    if !matches!(listing, Listing::None) {
        command.args(["--csv-points-over", "0.5"]);
    }
    if !uniform {
        command.env("ULPGAUGE_NO_UNIFORM", "1");
    }
    let out = command.output().unwrap();
    assert!(
        matches!(out.status.code(), Some(0 | 1)),
        "{name}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let read = |p: &Path| std::fs::read_to_string(p).unwrap();
    (
        serde_json::from_str(&read(&json)).unwrap(),
        read(&csv),
        read(&findings),
    )
}

/// The two paths agree on everything but timings.
fn same_outputs(name: &str, lib: &str, args: &[&str], listing: Listing) {
    let (report, csv, findings) = check(name, lib, args, true, listing);
    let (report_points, csv_points, findings_points) = check(name, lib, args, false, listing);
    let (a, b) = (comparable(&report), comparable(&report_points));
    for key in a.as_object().unwrap().keys() {
        assert_eq!(a.get(key), b.get(key), "{name}: key {key}");
    }
    assert_eq!(a, b, "{name}");
    assert!(csv == csv_points, "{name}: binade CSV differs");
    assert!(findings == findings_points, "{name}: findings differ");
    let inputs = report["sweep"]["inputs"].as_u64().unwrap_or(0);
    assert!(inputs > 100_000, "{name}: {inputs} inputs measured");
    let listed = findings.lines().filter(|l| l.contains(",point,")).count();
    match listing {
        Listing::Rows => assert!(listed > 10, "{name}: {listed} points listed"),
        _ => assert_eq!(listed, 0, "{name}"),
    }
}

/// (a) Outputs equal to the constant reference: step and ReLU left of zero (reference +0)
/// across the binade edges at −1 and −2, and step′ (the kernel's 0·x gives −0 there against
/// the reference +0: a constant that misses by its sign); ReLU again with a listing limit.
#[test]
fn exact_constant_outputs() {
    for (name, symbol, function, role, listing) in [
        ("step", "floor_step_f32", "step", "forward", Listing::None),
        ("relu", "floor_relu_f32", "relu", "forward", Listing::None),
        (
            "relu-listing",
            "floor_relu_f32",
            "relu",
            "forward",
            Listing::Quiet,
        ),
        (
            "step-derivative",
            "floor_step_deriv_f32",
            "step",
            "derivative",
            Listing::None,
        ),
    ] {
        let args = [
            "--symbol",
            symbol,
            "--function",
            function,
            "--role",
            role,
            "--sweep",
            "exhaustive",
            "--range=-2.5,-0.8",
        ];
        same_outputs(name, "libfloor.so", &args, listing);
    }
}

/// (b) A constant output one ulp below the constant reference over σ's saturated tail, across
/// the binade edge at 64: as it is, over a short stretch with its points listed (over 0.5
/// ulp), and in a dense sweep (whose points' classes are kept for the gap scans) with every
/// significand.
#[test]
fn constant_wrong_outputs() {
    let base = ["--symbol", "tail_low_sigmoid_f32", "--function", "sigmoid"];
    let mut exhaustive = base.to_vec();
    exhaustive.extend(["--sweep", "exhaustive", "--range=60,70"]);
    same_outputs("tail-low", "libtail.so", &exhaustive, Listing::None);
    // One ulp low on [64, 64.1) only, so that the listed points are few while the plot
    // buckets (1/480 of the range) are wider than a task: uniform tasks inside one bucket.
    let listed = [
        "--symbol",
        "patch_low_sigmoid_f32",
        "--function",
        "sigmoid",
        "--sweep",
        "exhaustive",
        "--range=60,70",
    ];
    same_outputs("patch-low-listed", "libtail.so", &listed, Listing::Rows);
    let mut dense = base.to_vec();
    dense.extend([
        "--sweep",
        "dense",
        "--per-binade",
        "8388608",
        "--range=60,70",
    ]);
    same_outputs("tail-low-dense", "libtail.so", &dense, Listing::None);
}

/// (c) Outputs that vary inside constant-reference tasks: σ broken at a few scattered inputs
/// (one ulp low, NaN, +∞), so that some tasks of the saturated tail are uniform and some not;
/// across the edge of the constant region (x = 38) and across the binade edge at 64; with and
/// without the listing.
#[test]
fn outputs_varying_inside_spans() {
    for range in ["--range=36,40", "--range=60,70"] {
        let args = [
            "--symbol",
            "spotty_sigmoid_f32",
            "--function",
            "sigmoid",
            "--sweep",
            "exhaustive",
            range,
        ];
        for listing in [Listing::None, Listing::Rows] {
            let name = format!("spotty{range}-{}", matches!(listing, Listing::Rows));
            same_outputs(&name, "libtail.so", &args, listing);
        }
    }
}

/// (d) Scaled-reference tasks (src/reference/fast/regions.rs `scaled`), whose references are
/// written from the input patterns and which are folded at once when every output is its
/// reference (`Stream::add_exact`): ReLU and tanh (tanhf(x) = x below 2^−27) exact across the
/// binade edges at 1 and 2 and at 2^−27's neighbours, swish's x/2 on the negative side (where a
/// power of two falls into the binade below), with and without the listing, in a dense sweep
/// too; and ReLU broken at a few scattered inputs (one ulp low, NaN), so that some scaled tasks
/// are exact and some not.
#[test]
fn scaled_spans() {
    for (name, lib, symbol, function, range, listing) in [
        (
            "relu-exact",
            "libfloor.so",
            "floor_relu_f32",
            "relu",
            "--range=0.8,2.5",
            Listing::None,
        ),
        (
            "relu-quiet",
            "libfloor.so",
            "floor_relu_f32",
            "relu",
            "--range=0.8,2.5",
            Listing::Quiet,
        ),
        (
            "tanh-exact",
            "libfloor.so",
            "floor_tanh_f32",
            "tanh",
            "--range=1e-9,5e-9",
            Listing::None,
        ),
        (
            "swish-half",
            "libfloor.so",
            "floor_swish_f32",
            "swish",
            "--range=-3e-20,-1e-21",
            Listing::None,
        ),
        (
            "relu-spotty",
            "libtail.so",
            "spotty_relu_f32",
            "relu",
            "--range=0.8,2.5",
            Listing::None,
        ),
        (
            "relu-spotty-rows",
            "libtail.so",
            "spotty_relu_f32",
            "relu",
            "--range=0.8,2.5",
            Listing::Rows,
        ),
    ] {
        let args = [
            "--symbol",
            symbol,
            "--function",
            function,
            "--sweep",
            "exhaustive",
            range,
        ];
        same_outputs(name, lib, &args, listing);
    }
    let dense = [
        "--symbol",
        "floor_relu_f32",
        "--function",
        "relu",
        "--sweep",
        "dense",
        "--per-binade",
        "8388608",
        "--range=0.8,2.5",
    ];
    same_outputs("relu-dense", "libfloor.so", &dense, Listing::None);
}
