//! `ulpgauge compare`: exit status both ways, on the committed baseline and on edited copies;
//! and the CI use: a fresh build of the demo kernels checked and compared with the baseline.

mod kernel_support;

use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

const BASELINE: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/reports/baseline-lumen-edge.json"
);

fn dir(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join(format!("compare-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn ulpgauge(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(args)
        .output()
        .expect("run ulpgauge");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn baseline() -> Value {
    serde_json::from_str(&std::fs::read_to_string(BASELINE).unwrap()).unwrap()
}

/// Writes an edited baseline and compares the baseline with it.
fn compare_edited(name: &str, edit: impl Fn(&mut Value), extra: &[&str]) -> (i32, String, String) {
    let mut v = baseline();
    edit(&mut v);
    let path = dir(name).join("candidate.json");
    std::fs::write(&path, serde_json::to_string(&v).unwrap()).unwrap();
    let mut args = vec!["compare", BASELINE, path.to_str().unwrap()];
    args.extend_from_slice(extra);
    ulpgauge(&args)
}

fn kernel<'a>(v: &'a mut Value, symbol: &str) -> &'a mut Value {
    v["kernels"]
        .as_array_mut()
        .unwrap()
        .iter_mut()
        .find(|k| k["kernel"]["symbol"] == symbol)
        .unwrap()
}

#[test]
fn identical_reports_exit_0() {
    let (code, stdout, stderr) = ulpgauge(&["compare", BASELINE, BASELINE]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    assert!(stdout.contains("12 kernels compared: 0 worse"), "{stdout}");
}

#[test]
fn worse_figures_exit_1_and_tolerance_and_not_judged_fields_do_not() {
    // max ulp grows by 0.25 ulp.
    let grow = |v: &mut Value| {
        let a = &mut kernel(v, "lumen_tanh_f32")["accuracy"]["max_ulp"];
        *a = Value::from(a.as_f64().unwrap() + 0.25);
    };
    let (code, stdout, _) = compare_edited("grow", grow, &[]);
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("WORSE"), "{stdout}");
    let (code, stdout, _) = compare_edited("tolerated", grow, &["--tolerance", "0.5"]);
    assert_eq!(code, 0, "{stdout}");
    assert!(stdout.contains("within tolerance"), "{stdout}");
    // A hygiene check that passed now fails.
    let (code, stdout, _) = compare_edited(
        "hygiene",
        |v| kernel(v, "lumen_sigmoid_f16")["hygiene"][0]["passed"] = Value::from(false),
        &["--changed-only"],
    );
    assert_eq!(code, 1, "{stdout}");
    assert!(stdout.contains("now failing: tail"), "{stdout}");
    // Throughput, library path and hash are shown but never judged.
    let (code, stdout, _) = compare_edited(
        "provenance",
        |v| {
            let k = kernel(v, "lumen_elu_f32");
            k["kernel"]["ns_per_element"] = Value::from(1e6);
            k["kernel"]["library"] = Value::from("/elsewhere/lib.so");
            k["provenance"]["library"]["sha256"] = Value::from("00".repeat(32));
        },
        &[],
    );
    assert_eq!(code, 0, "{stdout}");
    // Better is not worse: max ulp drops.
    let (code, stdout, _) = compare_edited(
        "better",
        |v| kernel(v, "lumen_tanh_f32")["accuracy"]["max_ulp"] = Value::from(0.5),
        &[],
    );
    assert_eq!(code, 0, "{stdout}");
    assert!(stdout.contains("better"), "{stdout}");
}

#[test]
fn missing_kernel_exits_1_and_added_kernel_is_listed() {
    let (code, stdout, _) = compare_edited(
        "missing",
        |v| {
            v["kernels"]
                .as_array_mut()
                .unwrap()
                .retain(|k| k["kernel"]["symbol"] != "lumen_gelu_bf16")
        },
        &[],
    );
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("MISSING from the candidate: lumen_gelu_bf16"),
        "{stdout}"
    );
    let (code, stdout, _) = compare_edited(
        "added",
        |v| {
            let mut extra = v["kernels"][0].clone();
            extra["kernel"]["symbol"] = Value::from("lumen_sigmoid_f32_v2");
            v["kernels"].as_array_mut().unwrap().push(extra);
        },
        &[],
    );
    assert_eq!(code, 0, "{stdout}");
    assert!(stdout.contains("only in the candidate (not judged): lumen_sigmoid_f32_v2"));
}

#[test]
fn bad_input_exits_2() {
    let (code, _, stderr) = compare_edited(
        "schema",
        // A version this ulpgauge does not read (it reads 1 and 2).
        |v| v["schema"] = Value::from("ulpgauge-check/9"),
        &[],
    );
    assert_eq!(code, 2);
    assert!(stderr.contains("different schema versions"), "{stderr}");
    assert_eq!(stderr.trim().lines().count(), 1);
    let (code, _, stderr) = ulpgauge(&["compare", BASELINE, "/nonexistent/candidate.json"]);
    assert_eq!(code, 2);
    assert!(stderr.contains("no such file"), "{stderr}");
    let junk = dir("junk").join("junk.json");
    std::fs::write(&junk, "not json").unwrap();
    let (code, _, stderr) = ulpgauge(&["compare", junk.to_str().unwrap(), BASELINE]);
    assert_eq!(code, 2, "{stderr}");
}

/// What a user's CI does: build the kernels afresh, check them with the baseline's sweep, and
/// compare. Only deterministic figures are judged, so an unchanged build compares equal.
#[test]
fn fresh_build_matches_the_committed_baseline() {
    let built = kernel_support::kernels();
    let d = dir("ci");
    // The shipped manifest, with its library paths pointing at the fresh build.
    let manifest = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/kernels-under-test/lumen-edge.toml"
    ))
    .unwrap()
    .replace("\"build/", &format!("\"{}/", built.display()));
    let m = d.join("lumen-edge.toml");
    std::fs::write(&m, manifest).unwrap();
    let report = d.join("candidate.json");
    let (code, _, stderr) = ulpgauge(&[
        "check",
        "--manifest",
        m.to_str().unwrap(),
        "--sweep",
        "dense,edge",
        "--per-binade",
        "8",
        "--quiet",
        "--no-progress",
        "--json",
        report.to_str().unwrap(),
    ]);
    // The shipped kernels have known findings (exit 1), never a crash.
    assert!(code == 0 || code == 1, "{stderr}");
    let (code, stdout, stderr) = ulpgauge(&["compare", BASELINE, report.to_str().unwrap()]);
    assert_eq!(code, 0, "{stdout}{stderr}");
}
