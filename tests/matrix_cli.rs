//! `ulpgauge matrix` with two gcc builds (and a compiler that is not installed, skipped).

use std::path::Path;
use std::process::Command;

#[test]
fn two_gcc_builds_make_one_table_with_csv_and_json() {
    let root = env!("CARGO_MANIFEST_DIR");
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("matrix-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    let (csv, json, reports) = (d.join("m.csv"), d.join("m.json"), d.join("reports"));
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(["matrix", "--manifest"])
        .arg(Path::new(root).join("kernels-under-test/lumen-edge.toml"))
        .args(["--build", "gcc -O2", "--build", "gcc -O3 -ffast-math"])
        .args(["--build", "no-such-cc-ulpgauge -O2"])
        .args(["--sweep", "dense,edge", "--per-binade", "8"])
        .arg("--work-dir")
        .arg(d.join("builds"))
        .arg("--csv")
        .arg(&csv)
        .arg("--json")
        .arg(&json)
        .arg("--reports")
        .arg(&reports)
        .output()
        .expect("run ulpgauge");
    let stdout = String::from_utf8_lossy(&out.stdout);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{stdout}{stderr}");
    assert!(
        stderr.contains("skipping build 'no-such-cc-ulpgauge -O2'"),
        "{stderr}"
    );
    assert!(stdout.contains("[1] gcc -O2") && stdout.contains("[2] gcc -O3 -ffast-math"));
    assert!(stdout.contains("lumen_sigmoid_f16"), "{stdout}");

    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    assert_eq!(m["schema"], "ulpgauge-matrix/1");
    assert_eq!(m["builds"][2]["status"], "skipped");
    let kernels = m["kernels"].as_array().unwrap().len();
    let cells = m["cells"].as_array().unwrap();
    assert_eq!(cells.len(), 2 * kernels);
    let csv = std::fs::read_to_string(&csv).unwrap();
    assert_eq!(csv.lines().count(), 1 + 2 * kernels);

    // GCC's -ffast-math links startup code that turns on flush-to-zero and denormals-are-zero
    // when the library loads (GCC manual, -ffast-math / crtfastmath.o; common practice): the
    // fp-environment check fails in that build and only there.
    let cell = |build: &str| {
        cells
            .iter()
            .find(|c| c["kernel"] == "lumen_sigmoid_f32" && c["build"] == build)
            .unwrap()
    };
    let fp = |c: &serde_json::Value| {
        c["failed"]
            .as_array()
            .unwrap()
            .iter()
            .any(|f| f.as_str().unwrap().contains("fp-environment"))
    };
    assert!(!fp(cell("gcc -O2")));
    assert!(fp(cell("gcc -O3 -ffast-math")));
    // Each built build leaves a check report that `compare` reads.
    assert!(reports.join("gcc--O2.json").is_file());
    assert!(reports.join("gcc--O3--ffast-math.json").is_file());
}

/// `--timeout` and `--kernel-memory` are checked as `check` checks them (one line, exit 2)
/// before anything is built, and a valid `--kernel-memory` is accepted.
#[test]
fn worker_bounds_are_checks_own_and_refused_before_any_build() {
    let root = env!("CARGO_MANIFEST_DIR");
    let d = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join(format!("matrix-bounds-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    for (flag, value, says) in [
        (
            "--timeout",
            "1e18",
            "--timeout must be a number of seconds above 0 and at most 86400, got 1e18",
        ),
        (
            "--timeout",
            "1e300",
            "--timeout must be a number of seconds above 0 and at most 86400, got 1e300",
        ),
        (
            "--timeout",
            "0",
            "--timeout must be a number of seconds above 0",
        ),
        (
            "--kernel-memory",
            "12Q",
            "--kernel-memory must be a size such as 4G",
        ),
    ] {
        let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
            .args(["matrix", "--manifest"])
            .arg(Path::new(root).join("kernels-under-test/lumen-edge.toml"))
            .args(["--build", "gcc -O2", flag, value, "--work-dir"])
            .arg(&d)
            .output()
            .expect("run ulpgauge");
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{flag} {value}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "{stderr}");
        assert!(stderr.contains(says), "{stderr}");
        assert!(!d.exists(), "{flag} {value}: something was built");
    }
}
