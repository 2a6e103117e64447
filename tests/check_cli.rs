//! `ulpgauge check` end to end with the hidden in-process kernels: exit statuses, bad input,
//! atomic reports, the JSON contract.

mod check_support;

use check_support::temp_dir;
use std::process::Command;

fn ulpgauge(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .arg("check")
        .args(args)
        .output()
        .expect("run ulpgauge");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

const BASE: [&str; 6] = [
    "--builtin-kernel",
    "reference",
    "--function",
    "relu",
    "--format",
    "bf16",
];

fn with(extra: &[&str]) -> Vec<String> {
    BASE.iter().chain(extra).map(|s| s.to_string()).collect()
}

fn run(extra: &[&str]) -> (i32, String, String) {
    let args = with(extra);
    let refs: Vec<&str> = args.iter().map(|s| s.as_str()).collect();
    ulpgauge(&refs)
}

#[test]
fn bad_input_exits_2_with_one_line_and_no_file() {
    let dir = temp_dir("cli-bad");
    let json = dir.join("r.json");
    let json = json.to_str().unwrap();
    let cases: [&[&str]; 10] = [
        &["--range", "2,1"],
        &["--range", "1,1"],
        &["--range", "0,1e40"],
        &["--range", "abc,1"],
        &["--points", "0"],
        &["--sweep", "everywhere"],
        &["--param", "alpha=1"],
        &["--abs-floor=-1"],
        &["--kernel-workers", "0"],
        &["--kernel-workers", "9"],
    ];
    for extra in cases {
        let mut args: Vec<&str> = vec!["--json", json];
        args.extend_from_slice(extra);
        let (code, _, stderr) = run(&args);
        assert_eq!(code, 2, "{extra:?}: {stderr}");
        assert!(
            !std::path::Path::new(json).exists(),
            "{extra:?} left a report"
        );
        if extra[0] != "--sweep" {
            assert_eq!(stderr.trim().lines().count(), 1, "{extra:?}: {stderr}");
            assert!(stderr.starts_with("ulpgauge: "), "{stderr}");
        }
    }
    for (flag, value) in [
        ("--format", "f64"),
        ("--function", "nosuch"),
        ("--format", "f32"),
    ] {
        let mut args: Vec<String> = BASE.iter().map(|s| s.to_string()).collect();
        let at = args.iter().position(|a| a == flag).unwrap();
        args[at + 1] = value.to_string();
        if value == "f32" {
            // Exhaustive f32 sweeps stream (no size cap any more), so the f32 case is a range
            // that holds no value: refused before any work.
            args.extend(["--sweep".to_string(), "exhaustive".to_string()]);
            args.push("--range=1,1".to_string());
        }
        let refs: Vec<&str> = args.iter().map(|s| s.as_str()).collect();
        let (code, _, stderr) = ulpgauge(&refs);
        assert_eq!(code, 2, "{flag} {value}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "{stderr}");
    }
    // Unwritable output path: a folder that does not exist.
    let (code, stdout, stderr) = run(&["--json", "/nonexistent-ulpgauge-dir/r.json"]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stdout.is_empty(),
        "work was done before the path was checked"
    );
    assert!(stderr.contains("/nonexistent-ulpgauge-dir/r.json"));
}

#[test]
fn exit_statuses_and_json_contract() {
    let dir = temp_dir("cli-exit");
    let json = dir.join("r.json");
    let csv = dir.join("r.csv");
    let svg = dir.join("r.svg");
    let (code, stdout, stderr) = run(&[
        "--json",
        json.to_str().unwrap(),
        "--csv",
        csv.to_str().unwrap(),
        "--plot",
        svg.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("max error"));
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
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
        assert!(report.get(key).is_some(), "missing key {key}");
    }
    assert!(report["crash"].is_null());
    for key in [
        "points",
        "max_ulp",
        "worst",
        "correctly_rounded",
        "faithful",
    ] {
        assert!(report["accuracy"].get(key).is_some(), "accuracy.{key}");
    }
    for key in ["input", "output", "reference"] {
        let v = &report["accuracy"]["worst"][key];
        assert!(v["bits"].as_str().unwrap().starts_with("0x") && v.get("value").is_some());
    }
    assert_eq!(report["accuracy"]["correctly_rounded"], 1.0);
    assert!(std::fs::read_to_string(&csv)
        .unwrap()
        .starts_with("function,format,role"));
    assert!(std::fs::read_to_string(&svg).unwrap().starts_with("<svg"));
    // No temporary files are left beside the reports.
    let names: Vec<String> = std::fs::read_dir(&dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 3, "{names:?}");

    // One ulp above the reference everywhere: fails --max-ulp 0.5 (exit 1) …
    let (code, _, _) = ulpgauge(&[
        "--builtin-kernel",
        "next-up",
        "--function",
        "sigmoid",
        "--format",
        "bf16",
        "--max-ulp",
        "0.5",
        "--quiet",
    ]);
    assert_eq!(code, 1);
    // … and passes --max-ulp 2.5.
    let (code, _, _) = ulpgauge(&[
        "--builtin-kernel",
        "next-up",
        "--function",
        "sigmoid",
        "--format",
        "bf16",
        "--max-ulp",
        "2.5",
        "--quiet",
    ]);
    assert_eq!(code, 0);
    // A crash beats a failed finding: exit 3, and the crash is in the report.
    let (code, _, _) = ulpgauge(&[
        "--builtin-kernel",
        "crash-on-nan",
        "--function",
        "tanh",
        "--format",
        "f16",
        "--max-ulp",
        "0",
        "--quiet",
        "--json",
        json.to_str().unwrap(),
    ]);
    assert_eq!(code, 3);
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    assert_eq!(report["crash"]["signal"], "SIGSEGV");
    // The first crash in sweep order is the first NaN pattern, 0x7c01.
    assert_eq!(report["crash"]["input"]["bits"], "0x7c01");
    assert_eq!(report["crash"]["input"]["value"], "nan");
}

#[test]
fn flush_to_zero_is_named_not_counted() {
    let dir = temp_dir("cli-ftz");
    let json = dir.join("r.json");
    let (code, _, _) = ulpgauge(&[
        "--builtin-kernel",
        "flush-to-zero",
        "--function",
        "tanh",
        "--format",
        "f16",
        "--quiet",
        "--json",
        json.to_str().unwrap(),
    ]);
    assert_eq!(code, 1);
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    // tanh(x) rounds to x for every subnormal binary16 x (tanh x = x − x³/3 + …), so the kernel
    // returns zero for all 2·1023 nonzero subnormals; none is counted as ulp error.
    assert_eq!(report["accuracy"]["flush_to_zero_outputs"], 2046);
    assert!(report["accuracy"]["max_ulp"].as_f64().unwrap() <= 0.5);
    let rules = report["special_values"].as_array().unwrap();
    assert!(rules
        .iter()
        .any(|r| r["rule"].as_str().unwrap().contains("flush") && r["passed"] == false));
}
