//! Strided kernels, `void NAME(const T *x, ptrdiff_t sx, T *y, ptrdiff_t sy, size_t n)`: the
//! Lumen demo's off-by-one is named with its stride pair and element, each stride fault of
//! tests/strided/lumen_stride_faults.c is named by the check made for it, a correct strided kernel passes all
//! eleven checks with the figures of its contiguous twin, and bad strides are bad input.

mod kernel_support;

use kernel_support::*;
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;
use ulpgauge::kernel::{HygieneCheck, KernelSpec, Signature};

const SIX: [&str; 6] = [
    "tail",
    "alignment",
    "bounds",
    "input-untouched",
    "fp-environment",
    "determinism",
];

/// Compiles the stride-fault fixtures once per test binary; returns the library.
fn faults() -> &'static Path {
    static LIB: OnceLock<PathBuf> = OnceLock::new();
    LIB.get_or_init(|| {
        let dir = kernels().join("stride-faults");
        std::fs::create_dir_all(&dir).unwrap();
        let lib = dir.join("liblumen_stride_faults.so");
        let root = Path::new(env!("CARGO_MANIFEST_DIR"));
        let ok = Command::new(std::env::var("CC").unwrap_or("cc".into()))
            .args(["-O1", "-std=c11", "-fPIC", "-shared", "-fvisibility=hidden"])
            .arg(format!(
                "-I{}",
                root.join("kernels-under-test/src").display()
            ))
            .arg("-o")
            .arg(&lib)
            .arg(root.join("tests/strided/lumen_stride_faults.c"))
            .arg("-lm")
            .status()
            .expect("run the C compiler")
            .success();
        assert!(ok, "compiling lumen_stride_faults.c");
        lib
    })
}

fn strided(lib: &Path, symbol: &str, sx: i32, sy: i32) -> KernelSpec {
    KernelSpec {
        library: lib.to_path_buf(),
        signature: Signature::Strided { sx, sy },
        ..spec("liblumen_strided.so", symbol, "sigmoid", "f32")
    }
}

/// Every check, in report order: the six of every kernel, then the five stride checks.
fn verdicts(spec: &KernelSpec) -> Vec<HygieneCheck> {
    let mut r = runner(spec);
    let checks = ulpgauge::kernel::hygiene::run_checks(&mut r, &f32_sample(20_000), None);
    let names: Vec<_> = checks.iter().map(|c| c.check).collect();
    let want: Vec<_> = SIX
        .iter()
        .chain(&ulpgauge::kernel::hygiene::STRIDED_CHECKS)
        .copied()
        .collect();
    assert_eq!(names, want);
    for c in &checks {
        assert!(!c.detail.is_empty() && !c.detail.contains('\n'), "{c:?}");
    }
    checks
}

fn detail<'a>(checks: &'a [HygieneCheck], name: &str) -> &'a HygieneCheck {
    checks.iter().find(|c| c.check == name).unwrap()
}

#[test]
fn the_demo_off_by_one_is_named_with_its_stride_pair_and_element() {
    let lib = kernels().join("liblumen_strided.so");
    let checks = verdicts(&strided(&lib, "lumen_sigmoid_f32_strided_ob1", 1, 1));
    // Called contiguously the kernel takes its unit-stride loop: the six checks pass.
    for c in &checks[..6] {
        assert!(c.passed, "{c:?}");
        assert!(c.detail.contains("called with strides (1,1)"), "{c:?}");
    }
    // Its remainder loop reads x one element ahead: for n = 67 = 16·4 + 3 the first wrong
    // element is 64, and it holds element 65's result (the hygiene pool keeps inputs whose
    // outputs differ, so the neighbour is told apart).
    let eq = detail(&checks, "stride-equivalence");
    assert!(!eq.passed);
    assert!(
        eq.detail
            .starts_with("strides (2,1), n=67, element 64: y[64] is 0x"),
        "{}",
        eq.detail
    );
    assert!(
        eq.detail.ends_with("wrong element read (x[65]'s result)"),
        "{}",
        eq.detail
    );
    // n = 1 is all remainder: element 0 reads one x stride past the end, where the worker put
    // NaN.
    let ragged = detail(&checks, "stride-ragged");
    assert!(!ragged.passed);
    assert!(
        ragged
            .detail
            .starts_with("strides (2,3), n=1, element 0: y[0] is 0x"),
        "{}",
        ragged.detail
    );
    // x stride 0 reads x[0] however far the pointer is advanced: the broadcast holds.
    assert!(detail(&checks, "stride-broadcast").passed);
}

#[test]
fn each_stride_fault_is_named_by_its_check() {
    let lib = faults();
    // A store into y's gap: named by the byte, the pair of elements around it and the pair.
    let checks = verdicts(&strided(lib, "lumen_stride_gap_store", 1, 1));
    let gaps = detail(&checks, "stride-gaps");
    assert!(!gaps.passed);
    assert_eq!(
        gaps.detail,
        "strides (1,2), n=2: a write at byte offset 4 from y[0] (in the gap between y[0] and y[1]) overwrote a canary byte"
    );
    // The six checks call it with unit strides, where it has no gap to write into.
    assert!(checks[..6].iter().all(|c| c.passed), "{checks:?}");

    // The BLAS convention for negative strides reads above x's span at n = 2.
    let checks = verdicts(&strided(lib, "lumen_stride_blas_negative", 1, 1));
    let neg = detail(&checks, "stride-negative");
    assert!(!neg.passed);
    assert!(
        neg.detail
            .starts_with("strides (-1,1), n=2, element 0: y[0] is 0x")
            && neg
                .detail
                .ends_with("a place past its ends was read (ulpgauge fills them with NaN)"),
        "{}",
        neg.detail
    );
    // And with y stride < 0 it writes above y's span.
    assert_eq!(
        detail(&checks, "stride-gaps").detail,
        "strides (3,-2), n=2: a write at byte offset 8 from y[0] (4 bytes past the top of the strided span) overwrote a canary byte"
    );

    // Stride 0 taken for 1: y[1] gets x[1], which is not there.
    let checks = verdicts(&strided(lib, "lumen_stride_zero_is_one", 1, 1));
    let zero = detail(&checks, "stride-broadcast");
    assert!(!zero.passed);
    assert!(
        zero.detail
            .starts_with("strides (0,1), n=4, element 1: y[1] is 0x")
            && zero.detail.ends_with("(ulpgauge fills them with NaN)"),
        "{}",
        zero.detail
    );
    for name in [
        "stride-gaps",
        "stride-negative",
        "stride-equivalence",
        "stride-ragged",
    ] {
        assert!(detail(&checks, name).passed, "{name}: {checks:?}");
    }
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

fn json(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

#[test]
fn a_correct_strided_kernel_passes_and_measures_like_its_contiguous_twin() {
    let dir = kernels();
    let lib = dir.join("liblumen_strided.so");
    let lib = lib.to_str().unwrap();
    let common = [
        "check",
        "--lib",
        lib,
        "--function",
        "sigmoid",
        "--format",
        "f32",
        "--sweep",
        "dense,edge",
        "--per-binade",
        "32",
        "--quiet",
        "--no-progress",
    ];
    let strided_json = dir.join("strided.json");
    let twin_json = dir.join("twin.json");
    let mut args = common.to_vec();
    let out = strided_json.to_str().unwrap();
    args.extend([
        "--symbol",
        "lumen_sigmoid_f32_strided",
        "--signature",
        "strided",
        "--strides=-2,3",
        "--json",
        out,
    ]);
    let (_, _, err) = ulpgauge(&args);
    assert!(err.is_empty(), "{err}");
    let mut args = common.to_vec();
    args.extend([
        "--symbol",
        "lumen_sigmoid_f32_unit",
        "--json",
        twin_json.to_str().unwrap(),
    ]);
    ulpgauge(&args);
    let (s, t) = (json(&strided_json), json(&twin_json));
    let hygiene = s["hygiene"].as_array().unwrap();
    assert_eq!(hygiene.len(), 11);
    for h in hygiene {
        assert_eq!(h["passed"], true, "{h}");
    }
    assert!(hygiene[0]["detail"]
        .as_str()
        .unwrap()
        .contains("called with strides (-2,3) as in the sweep"));
    // The same formula called through strides (-2, 3) gives the same outputs, so every figure
    // derived from them is the same.
    for key in [
        "accuracy",
        "special_values",
        "thresholds",
        "non_finite",
        "shape",
        "kinks",
        "sweep",
    ] {
        assert_eq!(s[key], t[key], "{key}");
    }
    assert_eq!(s["verdict"]["exit_code"], t["verdict"]["exit_code"]);
    // The kernel section says how the strided kernel was called; a contiguous one carries
    // neither key.
    assert_eq!(s["kernel"]["signature"], "strided");
    assert_eq!(s["kernel"]["strides"], serde_json::json!([-2, 3]));
    assert!(t["kernel"].get("signature").is_none() && t["kernel"].get("strides").is_none());
}

#[test]
fn bad_strides_and_signatures_are_bad_input() {
    let dir = kernels();
    let lib = dir.join("liblumen_strided.so");
    let lib = lib.to_str().unwrap();
    let out = dir.join("never.json");
    let base = [
        "check",
        "--lib",
        lib,
        "--symbol",
        "lumen_sigmoid_f32_strided",
        "--function",
        "sigmoid",
        "--format",
        "f32",
        "--sweep",
        "edge",
        "--json",
        out.to_str().unwrap(),
    ];
    let cases: [(&[&str], &str); 8] = [
        (&["--signature", "strided", "--strides=0,1"], "SX is 0"),
        (&["--signature", "strided", "--strides=1,0"], "SY is 0"),
        (&["--signature", "strided", "--strides=65,1"], "at most 64"),
        (&["--signature", "strided", "--strides=1,-65"], "at most 64"),
        (&["--signature", "strided", "--strides=1"], "expected SX,SY"),
        (
            &["--signature", "strided", "--strides=a,1"],
            "not an integer",
        ),
        (&["--strides=2,1"], "strided kernels only"),
        (
            &["--signature", "strided", "--role", "gradient"],
            "forward and derivative",
        ),
    ];
    for (extra, says) in cases {
        let mut args = base.to_vec();
        args.extend_from_slice(extra);
        let (code, _, err) = ulpgauge(&args);
        assert_eq!(code, 2, "{extra:?}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{extra:?}: {err}");
        assert!(err.contains(says), "{extra:?}: {err}");
        assert!(!out.exists(), "{extra:?} wrote a report");
    }
    // A manifest entry's strides: the file, line and key are named.
    let manifest = dir.join("bad-strides.toml");
    std::fs::write(
        &manifest,
        format!(
            "library = \"{lib}\"\n\n[[kernel]]\nsymbol = \"lumen_sigmoid_f32_strided\"\n\
             function = \"sigmoid\"\nformat = \"f32\"\nsignature = \"strided\"\nstrides = [3, 0]\n"
        ),
    )
    .unwrap();
    let (code, _, err) = ulpgauge(&["check", "--manifest", manifest.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("line 8: key `strides`") && err.contains("SY is 0"),
        "{err}"
    );
}

#[test]
fn the_demo_manifest_finds_the_off_by_one_and_passes_the_pointer_walk() {
    let dir = kernels();
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("kernels-under-test/lumen-edge-strided.toml"),
    )
    .unwrap()
    .replace("\"build/", &format!("\"{}/", dir.display()));
    let path = dir.join("lumen-edge-strided.toml");
    std::fs::write(&path, text).unwrap();
    let report = dir.join("lumen-edge-strided.json");
    let (code, stdout, err) = ulpgauge(&[
        "check",
        "--manifest",
        path.to_str().unwrap(),
        "--sweep",
        "dense,edge",
        "--per-binade",
        "16",
        "--no-progress",
        "--json",
        report.to_str().unwrap(),
    ]);
    assert_eq!(code, 1, "{stdout}{err}");
    assert!(
        stdout.contains("hygiene check stride-equivalence (strided calls give the contiguous results) failed: strides (2,1), n=67, element 64"),
        "{stdout}"
    );
    let r = json(&report);
    let kernels = r["kernels"].as_array().unwrap();
    let failed = |k: &Value| -> Vec<String> {
        k["hygiene"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|h| h["passed"] == false)
            .map(|h| h["check"].as_str().unwrap().to_string())
            .collect()
    };
    assert!(failed(&kernels[0]).is_empty(), "{}", kernels[0]["hygiene"]);
    assert!(kernels[0]["hygiene"][0]["detail"]
        .as_str()
        .unwrap()
        .contains("called with strides (2,-3)"));
    assert_eq!(kernels[0]["kernel"]["strides"], serde_json::json!([2, -3]));
    assert_eq!(
        failed(&kernels[1]),
        [
            "stride-gaps",
            "stride-negative",
            "stride-equivalence",
            "stride-ragged"
        ]
    );
}

#[test]
fn certify_judges_all_eleven_checks_of_a_strided_kernel() {
    let dir = kernels();
    let lib = dir.join("liblumen_strided.so");
    let spec = |symbol: &str, strides: &str| {
        let path = dir.join(format!("certify-{symbol}.toml"));
        std::fs::write(
            &path,
            format!(
                "[kernel]\nlibrary = \"{}\"\nsymbol = \"{symbol}\"\nfunction = \"sigmoid\"\n\
                 format = \"f32\"\nsignature = \"strided\"\nstrides = {strides}\n\n\
                 [sweep]\nkind = [\"edge\"]\n\n[require]\nhygiene = true\n",
                lib.display()
            ),
        )
        .unwrap();
        path
    };
    let good = spec("lumen_sigmoid_f32_strided", "[2, -3]");
    let (code, stdout, err) = ulpgauge(&["certify", "--spec", good.to_str().unwrap()]);
    assert_eq!(code, 0, "{stdout}{err}");
    assert!(stdout.contains("11/11 checks"), "{stdout}");
    let bad = spec("lumen_sigmoid_f32_strided_ob1", "[2, -3]");
    let (code, stdout, _) = ulpgauge(&["certify", "--spec", bad.to_str().unwrap()]);
    assert_eq!(code, 1, "{stdout}");
    assert!(
        stdout.contains("stride-equivalence: strides (2,1), n=67, element 64"),
        "{stdout}"
    );
    let zero = spec("lumen_sigmoid_f32_strided", "\"2,0\"");
    let (code, _, err) = ulpgauge(&["certify", "--spec", zero.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("key `kernel.strides`") && err.contains("SY is 0"),
        "{err}"
    );
}
