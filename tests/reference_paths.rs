//! `check --reference auto` (the proven fast path, MPFR where it cannot decide) and
//! `--reference mpfr` give the same report, figure for figure, on real kernels; with `auto`
//! every extreme the report names is recomputed with MPFR alone and agrees.

mod kernel_support;

use kernel_support::{comparable, kernels};
use serde_json::Value;
use std::path::PathBuf;
use std::process::Command;

fn check(args: &[&str], reference: &str, name: &str) -> Value {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("reference-paths");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(format!("{name}-{reference}.json"));
    let lib = kernels().join("liblumen_edge.so");
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(["check", "--lib", lib.to_str().unwrap()])
        .args(args)
        .args([
            "--reference",
            reference,
            "--quiet",
            "--no-progress",
            "--json",
        ])
        .arg(&path)
        .output()
        .unwrap();
    let code = out.status.code().unwrap_or(-1);
    assert!(
        [0, 1].contains(&code),
        "{name}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap()
}

fn same_report(name: &str, args: &[&str]) {
    let auto = check(args, "auto", name);
    let mpfr = check(args, "mpfr", name);
    let (a, m) = (comparable(&auto), comparable(&mpfr));
    for key in a.as_object().unwrap().keys() {
        assert_eq!(a.get(key), m.get(key), "{name}: key {key}");
    }
    let confirmed = &auto["provenance"]["reference_check"];
    assert!(
        confirmed["confirmed_with_mpfr"].as_u64().unwrap() > 0,
        "{name}: {confirmed}"
    );
    assert_eq!(confirmed["disagreements"], serde_json::json!([]), "{name}");
    // MPFR made every reference itself: nothing to confirm.
    assert_eq!(
        mpfr["provenance"]["reference_check"]["confirmed_with_mpfr"],
        0
    );
}

#[test]
fn sigmoid_exhaustive_ranges_agree() {
    // Across the fast path's closed-form edges (x = 2^-53, x = 38) and the f32 saturation
    // threshold of the reference (x ≈ 17.33).
    same_report(
        "sigmoid-small",
        &[
            "--symbol",
            "lumen_sigmoid_f32",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--sweep",
            "exhaustive",
            "--range=1.0e-16,1.2e-16",
        ],
    );
    same_report(
        "sigmoid-edge",
        &[
            "--symbol",
            "lumen_sigmoid_f32",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--sweep",
            "exhaustive",
            "--range=16.5,17.5",
        ],
    );
    same_report(
        "sigmoid-closed",
        &[
            "--symbol",
            "lumen_sigmoid_f32",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--sweep",
            "exhaustive",
            "--range=37.5,38.5",
        ],
    );
}

#[test]
fn constant_regions_agree() {
    // Across the edges of constant-reference regions, where `check` takes one reference for a
    // whole run of inputs (src/reference/fast/regions.rs): σ′'s engine zero beyond |x| = 745.2
    // (both signs), tanh's level just below 1 from x = 19.5, CELU's level just above −α below
    // x/α = −38.3 (α = 1, the ELU kernel with its α trailing) and GELU-tanh's −0 below x = −22
    // (the erf GELU kernel: only the two reports' agreement matters here).
    let celu = ["--param", "alpha=1", "--param-passing", "trailing"];
    for (name, symbol, function, role, range, extra) in [
        (
            "sigmoid-derivative-zero",
            "lumen_sigmoid_deriv_f32",
            "sigmoid",
            "derivative",
            "--range=745,745.5",
            &[][..],
        ),
        (
            "sigmoid-derivative-zero-negative",
            "lumen_sigmoid_deriv_f32",
            "sigmoid",
            "derivative",
            "--range=-745.5,-745",
            &[],
        ),
        (
            "tanh-saturated",
            "lumen_tanh_f32",
            "tanh",
            "forward",
            "--range=19,20",
            &[],
        ),
        (
            "celu-saturated",
            "lumen_elu_f32",
            "celu",
            "forward",
            "--range=-38.5,-38",
            &celu[..],
        ),
        (
            "gelu-tanh-negative-zero",
            "lumen_gelu_f32",
            "gelu-tanh",
            "forward",
            "--range=-22.5,-21.5",
            &[],
        ),
    ] {
        let mut args = vec![
            "--symbol",
            symbol,
            "--function",
            function,
            "--role",
            role,
            range,
            "--format",
            "f32",
            "--sweep",
            "exhaustive",
        ];
        args.extend_from_slice(extra);
        same_report(name, &args);
    }
}

#[test]
fn scaled_regions_agree() {
    // Inside and across the edges of scaled regions, where `check` writes each reference from
    // the input's pattern (src/reference/fast/regions.rs `scaled`), each range a few ten
    // thousand patterns (MPFR takes them one by one): swish just beside x/2 for |x| < 2^−54,
    // across 2^−69 on both signs (on the negative side a power of two falls into the binade
    // below), and just below x across z = 39; tanh just inside x across 2^−27; GELU-tanh's x/2
    // across 2^−56 and x across 8 (the erf GELU kernel: only the reports' agreement matters).
    for (name, symbol, function, range) in [
        (
            "swish-half",
            "lumen_swish_f32",
            "swish",
            "--range=1.69e-21,1.70e-21",
        ),
        (
            "swish-half-negative",
            "lumen_swish_f32",
            "swish",
            "--range=-1.70e-21,-1.69e-21",
        ),
        (
            "swish-level",
            "lumen_swish_f32",
            "swish",
            "--range=38.9,39.1",
        ),
        (
            "tanh-tiny",
            "lumen_tanh_f32",
            "tanh",
            "--range=7.44e-9,7.46e-9",
        ),
        (
            "gelu-tanh-half",
            "lumen_gelu_f32",
            "gelu-tanh",
            "--range=-1.39e-17,-1.38e-17",
        ),
        (
            "gelu-tanh-level",
            "lumen_gelu_f32",
            "gelu-tanh",
            "--range=7.99,8.01",
        ),
    ] {
        let args = vec![
            "--symbol",
            symbol,
            "--function",
            function,
            range,
            "--format",
            "f32",
            "--sweep",
            "exhaustive",
        ];
        same_report(name, &args);
    }
}

#[test]
fn sampled_f32_kernels_agree() {
    for (name, args) in [
        (
            "tanh",
            vec!["--symbol", "lumen_tanh_f32", "--function", "tanh"],
        ),
        (
            "elu",
            vec![
                "--symbol",
                "lumen_elu_f32",
                "--function",
                "elu",
                "--param",
                "alpha=0.5",
                "--param-passing",
                "trailing",
            ],
        ),
        (
            "swish",
            vec![
                "--symbol",
                "lumen_swish_f32",
                "--function",
                "swish",
                "--param",
                "beta=1",
            ],
        ),
        (
            "gelu",
            vec!["--symbol", "lumen_gelu_f32", "--function", "gelu"],
        ),
        (
            "sigmoid-derivative",
            vec![
                "--symbol",
                "lumen_sigmoid_deriv_f32",
                "--function",
                "sigmoid",
                "--role",
                "derivative",
            ],
        ),
    ] {
        let mut a = args.clone();
        a.extend([
            "--format",
            "f32",
            "--sweep",
            "dense,edge",
            "--per-binade",
            "32",
        ]);
        same_report(name, &a);
    }
}
