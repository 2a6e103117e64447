//! Hostile files: report paths that are not regular files, and `compare` inputs with missing or
//! malformed fields.

use serde_json::Value;
use std::os::unix::fs::{FileTypeExt, MetadataExt};
use std::path::{Path, PathBuf};
use std::process::Command;

fn dir(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join(format!("hostile-files-{name}-{}", std::process::id()));
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

/// A quick exhaustive bf16 check of an in-process kernel, with `extra` options.
fn check(extra: &[&str]) -> (i32, String, String) {
    let mut args = vec![
        "check",
        "--builtin-kernel",
        "reference",
        "--function",
        "sigmoid",
        "--format",
        "bf16",
        "--no-progress",
    ];
    args.extend_from_slice(extra);
    ulpgauge(&args)
}

fn is_report(text: &str) -> bool {
    serde_json::from_str::<Value>(text).is_ok_and(|v| {
        v["schema"]
            .as_str()
            .is_some_and(|s| s.starts_with("ulpgauge-check/"))
    })
}

fn mknod_null(path: &Path) -> bool {
    use std::os::unix::ffi::OsStrExt;
    let c = std::ffi::CString::new(path.as_os_str().as_bytes()).unwrap();
    // The null device is character device 1:3 on Linux (Documentation/admin-guide/devices.txt).
    // SAFETY: mknod with a valid path; it fails without CAP_MKNOD.
    unsafe { libc::mknod(c.as_ptr(), libc::S_IFCHR | 0o666, libc::makedev(1, 3)) == 0 }
}

#[test]
fn a_character_device_is_written_through_never_replaced() {
    let d = dir("device");
    let node = d.join("null");
    // As root a copy of the null device in a temporary folder; otherwise /dev/null itself,
    // which an unprivileged process could not replace anyway (so the test still shows the
    // report is written through instead of failing).
    let target = if mknod_null(&node) {
        node
    } else {
        PathBuf::from("/dev/null")
    };
    let before = std::fs::metadata(&target).unwrap();
    assert!(before.file_type().is_char_device());
    for flag in ["--json", "--findings"] {
        let (code, _, stderr) = check(&["--quiet", flag, target.to_str().unwrap()]);
        assert_eq!(code, 0, "{flag}: {stderr}");
    }
    let after = std::fs::metadata(&target).unwrap();
    assert!(
        after.file_type().is_char_device(),
        "the device was replaced"
    );
    assert_eq!((after.rdev(), after.ino()), (before.rdev(), before.ino()));
    let leftovers: Vec<_> = std::fs::read_dir(target.parent().unwrap())
        .unwrap()
        .flatten()
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .filter(|e| e.file_name().to_string_lossy().contains("null"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
    // The machine's own /dev/null is untouched whatever happened above.
    assert!(std::fs::metadata("/dev/null")
        .unwrap()
        .file_type()
        .is_char_device());
}

#[test]
fn a_fifo_is_written_through_to_its_reader() {
    let d = dir("fifo");
    let fifo = d.join("report.fifo");
    let c = std::ffi::CString::new(fifo.to_str().unwrap()).unwrap();
    // SAFETY: mkfifo with a valid path.
    assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read_to_string(fifo).unwrap())
    };
    let (code, _, stderr) = check(&["--quiet", "--json", fifo.to_str().unwrap()]);
    assert_eq!(code, 0, "{stderr}");
    assert!(is_report(&reader.join().unwrap()));
    assert!(std::fs::symlink_metadata(&fifo)
        .unwrap()
        .file_type()
        .is_fifo());
}

#[test]
fn a_symlink_is_followed_and_stays_a_link() {
    let d = dir("link");
    std::fs::create_dir(d.join("reports")).unwrap();
    let target = d.join("reports/latest.json");
    std::fs::write(&target, "old").unwrap();
    std::os::unix::fs::symlink("reports/latest.json", d.join("link.json")).unwrap();
    // A dangling link: the report is created where it points.
    std::os::unix::fs::symlink("reports/new.json", d.join("dangling.json")).unwrap();
    for (link, target) in [
        (d.join("link.json"), target),
        (d.join("dangling.json"), d.join("reports/new.json")),
    ] {
        let (code, _, stderr) = check(&["--quiet", "--json", link.to_str().unwrap()]);
        assert_eq!(code, 0, "{stderr}");
        assert!(std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
        assert!(is_report(&std::fs::read_to_string(&target).unwrap()));
    }
    let names: Vec<String> = std::fs::read_dir(d.join("reports"))
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names.len(), 2, "no temporary file left: {names:?}");
}

#[test]
fn folders_and_unwritable_paths_are_refused_before_any_work() {
    let d = dir("refused");
    let csv = d.join("rows.csv");
    for bad in [d.clone(), d.join("missing/sub/report.json")] {
        let (code, _, stderr) = check(&[
            "--quiet",
            "--csv",
            csv.to_str().unwrap(),
            "--json",
            bad.to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "{stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "{stderr}");
        assert!(stderr.starts_with("ulpgauge: "), "{stderr}");
        assert!(!csv.exists(), "no other report was written");
    }
    let (_, _, stderr) = check(&["--json", d.to_str().unwrap()]);
    assert!(stderr.contains("is a folder"), "{stderr}");
}

#[test]
fn dash_is_standard_output_once() {
    let (code, stdout, stderr) = check(&["--json", "-"]);
    assert_eq!(code, 0, "{stderr}");
    assert!(is_report(&stdout), "only the report is printed");
    let (code, _, stderr) = check(&["--json", "-", "--csv", "-"]);
    assert_eq!(code, 2);
    assert!(stderr.contains("standard output"), "{stderr}");
}

const BASELINE: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/reports/baseline-lumen-edge.json"
);

/// Compares the baseline with an edited copy of itself (candidate), or the other way round.
fn compare_with(name: &str, edit: impl Fn(&mut Value), edited_is_baseline: bool) -> (i32, String) {
    let mut v: Value = serde_json::from_str(&std::fs::read_to_string(BASELINE).unwrap()).unwrap();
    edit(&mut v);
    let path = dir(name).join("edited.json");
    std::fs::write(&path, serde_json::to_string(&v).unwrap()).unwrap();
    let edited = path.to_str().unwrap();
    let (code, stdout, stderr) = if edited_is_baseline {
        ulpgauge(&["compare", edited, BASELINE])
    } else {
        ulpgauge(&["compare", BASELINE, edited])
    };
    assert!(code != 0 || stderr.is_empty(), "{stdout}{stderr}");
    (code, stderr)
}

#[test]
fn compare_refuses_missing_and_malformed_fields() {
    type Edit = fn(&mut Value);
    let cases: Vec<(&str, Edit, &str)> = vec![
        (
            "no-max",
            |v| {
                v["kernels"][1]["accuracy"]
                    .as_object_mut()
                    .unwrap()
                    .remove("max_ulp");
            },
            "accuracy.max_ulp",
        ),
        (
            "string-max",
            |v| v["kernels"][1]["accuracy"]["max_ulp"] = Value::from("0.5"),
            "accuracy.max_ulp",
        ),
        (
            "negative-max",
            |v| v["kernels"][1]["accuracy"]["max_ulp"] = Value::from(-1.0),
            "accuracy.max_ulp",
        ),
        (
            "mean-over-max",
            |v| v["kernels"][1]["accuracy"]["mean_ulp"] = Value::from(1e9),
            "mean_ulp",
        ),
        (
            "fraction",
            |v| v["kernels"][1]["accuracy"]["faithful"] = Value::from(1.5),
            "accuracy.faithful",
        ),
        (
            "cr-over-faithful",
            |v| {
                v["kernels"][1]["accuracy"]["correctly_rounded"] = Value::from(1.0);
                v["kernels"][1]["accuracy"]["faithful"] = Value::from(0.5);
            },
            "exceeds accuracy.faithful",
        ),
        (
            "points",
            |v| v["kernels"][1]["accuracy"]["points"] = Value::from(12.5),
            "accuracy.points",
        ),
        (
            "hygiene-passed",
            |v| v["kernels"][1]["hygiene"][0]["passed"] = Value::from("yes"),
            "hygiene[0]",
        ),
        (
            "hygiene-entry",
            |v| v["kernels"][1]["hygiene"][0] = Value::from(7),
            "hygiene[0]",
        ),
        (
            "hygiene-twice",
            |v| {
                let first = v["kernels"][1]["hygiene"][0].clone();
                v["kernels"][1]["hygiene"]
                    .as_array_mut()
                    .unwrap()
                    .push(first);
            },
            "listed twice",
        ),
        (
            "special-passed",
            |v| {
                v["kernels"][1]["special_values"][0]
                    .as_object_mut()
                    .unwrap()
                    .remove("passed");
            },
            "special_values[0]",
        ),
        (
            "run-count",
            |v| {
                v["kernels"][1]["non_finite"] = serde_json::json!([{"count": "many"}]);
            },
            "non_finite[0]",
        ),
        (
            "crash",
            |v| v["kernels"][1]["crash"] = Value::from(true),
            "crash",
        ),
        (
            "crash-signal",
            |v| {
                v["kernels"][1]["crash"] =
                    serde_json::json!({"input": {"bits": "0x0"}, "count": 1});
            },
            "signal",
        ),
        (
            "no-crash-key",
            |v| {
                v["kernels"][1].as_object_mut().unwrap().remove("crash");
            },
            "crash",
        ),
        ("role", |v| v["kernels"][1]["role"] = Value::from(3), "role"),
        (
            "throughput",
            |v| v["kernels"][1]["kernel"]["ns_per_element"] = Value::from(-2.0),
            "ns_per_element",
        ),
        (
            "no-kernels",
            |v| v["kernels"] = serde_json::json!([]),
            "no kernel",
        ),
        (
            "kernel-not-object",
            |v| v["kernels"][1] = Value::from("lumen"),
            "kernels[1]",
        ),
    ];
    for (name, edit, names) in cases {
        // Malformed on either side is bad input: never read as 0, never judged.
        for edited_is_baseline in [false, true] {
            let (code, stderr) = compare_with(name, edit, edited_is_baseline);
            assert_eq!(code, 2, "{name}: {stderr}");
            assert_eq!(stderr.trim().lines().count(), 1, "{name}: {stderr}");
            assert!(stderr.contains(names), "{name}: {stderr}");
            assert!(
                stderr.contains("edited.json"),
                "{name}: the file is named: {stderr}"
            );
        }
    }
}

#[test]
fn compare_never_calls_a_regression_better() {
    // A worse but well-formed candidate is judged worse (exit 1); the same numbers could not
    // come out as "better" by being read as 0.
    let (code, _) = compare_with(
        "regression",
        |v| {
            let a = &mut v["kernels"][1]["accuracy"];
            a["max_ulp"] = Value::from(a["max_ulp"].as_f64().unwrap() + 3.0);
        },
        false,
    );
    assert_eq!(code, 1);
}
