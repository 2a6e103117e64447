//! `check --input-format F --output-format G` end to end: the mixed-format demo kernels through
//! the worker (C types per side), the built-in reference kernel in-process, and the options and
//! manifest keys that must be refused. The figures themselves are compared with mpmath by
//! tests/crosscheck/mixed_check.py.

mod kernel_support;

use kernel_support::kernels;
use std::path::PathBuf;
use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn out_path(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("check-mixed");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    let _ = std::fs::remove_file(&path);
    path
}

fn read(path: &PathBuf) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn check_lib(symbol: &str, function: &str, input: &str, output: &str) -> serde_json::Value {
    let lib = kernels().join("liblumen_edge.so");
    let path = out_path(&format!("{symbol}.json"));
    let (code, _, err) = run(&[
        "check",
        "--lib",
        lib.to_str().unwrap(),
        "--symbol",
        symbol,
        "--function",
        function,
        "--input-format",
        input,
        "--output-format",
        output,
        "--no-progress",
        "--quiet",
        "--json",
        path.to_str().unwrap(),
    ]);
    assert!(code == 0 || code == 1, "exit {code}: {err}");
    read(&path)
}

#[test]
fn a_bf16_to_f32_kernel_is_swept_over_every_bf16_and_measured_in_f32_ulps() {
    let r = check_lib("lumen_silu_bf16_f32", "silu", "bf16", "f32");
    assert_eq!(r["input_format"], "bf16");
    assert_eq!(r["output_format"], "f32");
    assert_eq!(r["format"], "f32");
    assert_eq!(r["accuracy"]["coverage"], "exhaustive");
    // Every one of bfloat16's 2^16 patterns is an input.
    assert_eq!(r["sweep"]["inputs"], 65536);
    // The worst input is a bf16 pattern (4 hex digits), the output an f32 one (8).
    let worst = &r["accuracy"]["worst"];
    assert_eq!(worst["input"]["bits"].as_str().unwrap().len(), 6);
    assert_eq!(worst["output"]["bits"].as_str().unwrap().len(), 10);
    // Computed in double and rounded once into f32: within half an f32 ulp (a double rounding
    // adds at most 2^-29 ulp: common practice, the binary64 error of a few operations).
    assert!(r["accuracy"]["max_ulp"].as_f64().unwrap() <= 0.5 + 1e-6);
    assert_eq!(r["verdict"]["exit_code"], 0, "{}", r["verdict"]);
}

#[test]
fn the_truncating_f32_to_bf16_tanh_is_diagnosed_as_rounding_toward_zero() {
    let r = check_lib("lumen_tanh_f32_bf16_trunc", "tanh", "f32", "bf16");
    assert_eq!(r["accuracy"]["coverage"], "sampled");
    let rounding = &r["accuracy"]["rounding"];
    // Dropping the low 16 bits of an f32 keeps the bf16 value on zero's side of the f32 one:
    // IEEE 754-2019 4.3.2 roundTowardZero. Every off-by-one point must be one of those.
    assert_eq!(rounding["rule"], "toward-zero", "{rounding}");
    assert_eq!(rounding["toward_zero"], rounding["other_neighbour"]);
    assert!(rounding["message"]
        .as_str()
        .unwrap()
        .contains("look truncated"));
    // Faithful (the other neighbour at worst) but not correctly rounded.
    let max = r["accuracy"]["max_ulp"].as_f64().unwrap();
    assert!(max > 0.5 && max < 1.0 + 1e-6, "max_ulp {max}");
}

#[test]
fn an_f16_to_e4m3_kernel_reports_e4m3_ulps_over_every_f16() {
    let r = check_lib("lumen_sigmoid_f16_e4m3", "sigmoid", "f16", "e4m3");
    assert_eq!(r["sweep"]["inputs"], 65536);
    let worst = &r["accuracy"]["worst"];
    assert_eq!(worst["output"]["bits"].as_str().unwrap().len(), 4);
    assert!(r["accuracy"]["max_ulp"].as_f64().unwrap() <= 0.5 + 1e-6);
}

#[test]
fn the_reference_kernel_is_exact_in_every_role_across_formats() {
    for role in ["forward", "derivative", "gradient"] {
        let path = out_path(&format!("builtin-{role}.json"));
        let (code, _, err) = run(&[
            "check",
            "--builtin-kernel",
            "reference",
            "--function",
            "tanh",
            "--input-format",
            "e5m2",
            "--output-format",
            "bf16",
            "--role",
            role,
            "--quiet",
            "--json",
            path.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{role}: {err}");
        let r = read(&path);
        assert_eq!(r["accuracy"]["correctly_rounded"], 1.0, "{role}");
        assert_eq!(r["sweep"]["inputs"], 256, "{role}");
    }
}

#[test]
fn conflicting_or_incomplete_format_options_are_bad_input() {
    let bad: [&[&str]; 6] = [
        &[
            "--format",
            "f32",
            "--input-format",
            "bf16",
            "--output-format",
            "f32",
        ],
        &["--format", "f32", "--output-format", "bf16"],
        &["--input-format", "bf16"],
        &["--output-format", "f32"],
        &["--input-format", "bf9", "--output-format", "f32"],
        &[
            "--input-format",
            "bf16",
            "--output-format",
            "f32",
            "--shard",
            "1/2",
        ],
    ];
    for extra in bad {
        let path = out_path("bad.json");
        let mut args = vec![
            "check",
            "--builtin-kernel",
            "reference",
            "--function",
            "silu",
            "--json",
            path.to_str().unwrap(),
        ];
        args.extend_from_slice(extra);
        let (code, _, err) = run(&args);
        assert_eq!(code, 2, "{extra:?}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{extra:?}: {err}");
        assert!(!path.exists(), "{extra:?} wrote a report");
    }
}

#[test]
fn manifest_entries_take_input_and_output_formats_or_format_alone() {
    let dir = out_path("manifests");
    std::fs::create_dir_all(&dir).unwrap();
    let lib = kernels().join("liblumen_edge.so");
    let entry = |keys: &str| {
        format!(
            "library = \"{}\"\n[[kernel]]\nsymbol = \"lumen_silu_bf16_f32\"\nfunction = \"silu\"\n{keys}\n",
            lib.display()
        )
    };
    let good = dir.join("good.toml");
    std::fs::write(
        &good,
        entry("input-format = \"bf16\"\noutput-format = \"f32\""),
    )
    .unwrap();
    let path = out_path("manifest.json");
    let (code, _, err) = run(&[
        "check",
        "--manifest",
        good.to_str().unwrap(),
        "--quiet",
        "--json",
        path.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let r = read(&path);
    assert_eq!(r["kernels"][0]["input_format"], "bf16");
    assert_eq!(r["kernels"][0]["output_format"], "f32");
    for (name, keys) in [
        (
            "both.toml",
            "format = \"f32\"\ninput-format = \"bf16\"\noutput-format = \"f32\"",
        ),
        ("half.toml", "input-format = \"bf16\""),
        ("none.toml", ""),
        (
            "in-place.toml",
            "input-format = \"bf16\"\noutput-format = \"f32\"\nin-place = true",
        ),
    ] {
        let file = dir.join(name);
        std::fs::write(&file, entry(keys)).unwrap();
        let (code, _, err) = run(&["check", "--manifest", file.to_str().unwrap(), "--quiet"]);
        assert_eq!(code, 2, "{name}: {err}");
        assert!(err.contains("line "), "{name}: {err}");
    }
}

#[test]
fn certify_specs_take_input_and_output_formats() {
    let dir = out_path("specs");
    std::fs::create_dir_all(&dir).unwrap();
    let lib = kernels().join("liblumen_edge.so");
    let spec = |formats: &str| {
        format!(
            "[kernel]\nlibrary = \"{}\"\nsymbol = \"lumen_silu_bf16_f32\"\nfunction = \"silu\"\n{formats}\n[sweep]\nrange = \"-2,2\"\n[require]\nmax_ulp = 0.5\n",
            lib.display()
        )
    };
    let good = dir.join("good.toml");
    std::fs::write(
        &good,
        spec("input_format = \"bf16\"\noutput_format = \"f32\""),
    )
    .unwrap();
    let path = out_path("certificate.json");
    let (code, _, err) = run(&[
        "certify",
        "--spec",
        good.to_str().unwrap(),
        "--json",
        path.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    let c = read(&path);
    assert_eq!(c["kernel"]["input_format"], "bf16");
    assert_eq!(c["kernel"]["output_format"], "f32");
    // The range is read in bf16: every bf16 pattern in [-2, 2) is an input.
    assert!(c["statement"]
        .as_str()
        .unwrap()
        .contains("bf16 bit patterns"));
    let bad = dir.join("bad.toml");
    std::fs::write(
        &bad,
        spec("format = \"f32\"\ninput_format = \"bf16\"\noutput_format = \"f32\""),
    )
    .unwrap();
    let (code, _, err) = run(&["certify", "--spec", bad.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("kernel.format"), "{err}");
}
