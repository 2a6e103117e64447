//! `ulpgauge check` end to end on the Lumen Edge demo libraries, through the worker process.

mod kernel_support;

use kernel_support::kernels;
use std::path::PathBuf;
use std::process::Command;

fn check(args: &[&str], json: &str) -> (i32, serde_json::Value, String) {
    let out_dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("check-demo");
    std::fs::create_dir_all(&out_dir).unwrap();
    let json_path = out_dir.join(json);
    let _ = std::fs::remove_file(&json_path);
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .arg("check")
        .args(args)
        .arg("--json")
        .arg(&json_path)
        .arg("--no-progress")
        .output()
        .unwrap();
    let code = out.status.code().unwrap_or(-1);
    let report = std::fs::read_to_string(&json_path)
        .map(|t| serde_json::from_str(&t).unwrap())
        .unwrap_or(serde_json::Value::Null);
    (
        code,
        report,
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn lib(name: &str) -> String {
    kernels().join(name).to_string_lossy().into_owned()
}

#[test]
fn blended_f16_elu_turns_nan_exactly_where_exp_overflows_binary16() {
    // IEEE 754-2019: binary16 max is 65504 and RN overflows from 65504 + ulp(65504)/2 = 65520,
    // so e^x rounds to +inf from the first binary16 x ≥ ln(65520).
    let threshold = 65520f64.ln();
    let first = (0x4000u16..0x7c00)
        .find(|&b| half::f16::from_bits(b).to_f64() >= threshold)
        .unwrap();
    let (code, report, err) = check(
        &[
            "--lib",
            &lib("liblumen_edge.so"),
            "--symbol",
            "lumen_elu_f16",
            "--function",
            "elu",
            "--format",
            "f16",
        ],
        "elu-f16.json",
    );
    assert_eq!(code, 1, "{err}");
    let runs = report["non_finite"].as_array().unwrap();
    let run = runs
        .iter()
        .find(|r| r["kernel"] == "nan" && r["reference"] == "finite")
        .unwrap();
    assert_eq!(run["first"]["bits"], format!("0x{first:04x}"));
    assert_eq!(run["first"]["bits"], "0x498c");
    assert_eq!(run["last"]["bits"], "0x7bff");
    assert_eq!(report["sweep"]["coverage"], "exhaustive");
}

#[test]
fn a_clean_kernel_passes_and_reports_every_section() {
    let (code, report, err) = check(
        &[
            "--lib",
            &lib("liblumen_edge.so"),
            "--symbol",
            "lumen_sigmoid_f16",
            "--function",
            "sigmoid",
            "--format",
            "f16",
        ],
        "sigmoid-f16.json",
    );
    assert_eq!(code, 0, "{err}");
    for key in [
        "accuracy",
        "non_finite",
        "special_values",
        "hygiene",
        "crash",
        "thresholds",
        "provenance",
        "function",
        "format",
        "role",
        "sweep",
    ] {
        assert!(report.get(key).is_some(), "missing {key}");
    }
    assert!(report["crash"].is_null());
    let hygiene = report["hygiene"].as_array().unwrap();
    assert_eq!(hygiene.len(), 6);
    assert!(hygiene.iter().all(|h| h["passed"] == true));
    // Converting through float and rounding to nearest even once more: within half an ulp plus
    // the float evaluation's error.
    let max = report["accuracy"]["max_ulp"].as_f64().unwrap();
    assert!(max < 0.51, "{max}");
    let sha = report["provenance"]["library"]["sha256"].as_str().unwrap();
    assert_eq!(sha.len(), 64);
}

#[test]
fn a_crash_is_pinned_to_its_input_and_wins_over_findings() {
    let (code, report, err) = check(
        &[
            "--lib",
            &lib("liblumen_faulty.so"),
            "--symbol",
            "lumen_tanh_f16_crash",
            "--function",
            "tanh",
            "--format",
            "f16",
        ],
        "crash.json",
    );
    assert_eq!(code, 3, "{err}");
    assert_eq!(report["crash"]["input"]["bits"], "0x4880");
    assert_eq!(report["crash"]["signal"], "SIGSEGV");
    // The rest of the sweep was still measured.
    assert!(report["accuracy"]["points"].as_u64().unwrap() > 60000);
}

#[test]
fn a_hang_is_pinned_to_its_input() {
    let (code, report, err) = check(
        &[
            "--lib",
            &lib("liblumen_faulty.so"),
            "--symbol",
            "lumen_sigmoid_f32_hang",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--sweep",
            "edge",
            "--timeout",
            "1",
        ],
        "hang.json",
    );
    assert_eq!(code, 3, "{err}");
    assert_eq!(report["crash"]["signal"], "hang");
    assert_eq!(report["crash"]["input"]["bits"], "0x7f800000");
}

#[test]
fn fast_math_flush_to_zero_at_load_time_fails_fp_environment() {
    let (code, report, err) = check(
        &[
            "--lib",
            &lib("liblumen_fastmath.so"),
            "--symbol",
            "lumen_sigmoid_f32_fast",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--range=-100,-80",
            "--sweep",
            "dense",
            "--points",
            "64",
        ],
        "fastmath.json",
    );
    assert_eq!(code, 1, "{err}");
    let fp = report["hygiene"]
        .as_array()
        .unwrap()
        .iter()
        .find(|h| h["check"] == "fp-environment")
        .unwrap()
        .clone();
    assert_eq!(fp["passed"], false);
    let detail = fp["detail"].as_str().unwrap();
    assert!(detail.contains("FTZ") && detail.contains("DAZ"), "{detail}");
}

#[test]
fn bad_library_is_exit_2_and_writes_nothing() {
    for (library, symbol) in [
        ("no-such-lib.so", "x"),
        ("liblumen_edge.so", "lumen_no_such_symbol"),
    ] {
        let (code, report, err) = check(
            &[
                "--lib",
                &lib(library),
                "--symbol",
                symbol,
                "--function",
                "sigmoid",
                "--format",
                "f16",
            ],
            "bad.json",
        );
        assert_eq!(code, 2, "{err}");
        assert!(report.is_null());
        assert_eq!(err.trim_end().lines().count(), 1, "{err}");
    }
}
