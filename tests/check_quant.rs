//! `check --format i8|u8` end to end through the worker: the Lumen int8 demo kernels, their
//! listed off-by-one codes, the ties-away count, and bad options (exit 2, one line, no file).

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
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("check-quant");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    let _ = std::fs::remove_file(&path);
    path
}

const SIGMOID_I8: [&str; 8] = [
    "--input-scale",
    "0.0625",
    "--input-zero-point",
    "0",
    "--output-scale",
    "0.00390625",
    "--output-zero-point",
    "-128",
];

/// Checks one kernel of liblumen_quant.so; (exit status, terminal, JSON report).
fn check(
    symbol: &str,
    function: &str,
    ty: &str,
    quant: &[&str],
    extra: &[&str],
) -> (i32, String, serde_json::Value) {
    let lib = kernels().join("liblumen_quant.so");
    let path = out_path(&format!("{symbol}.json"));
    let mut args = vec![
        "check",
        "--lib",
        lib.to_str().unwrap(),
        "--symbol",
        symbol,
        "--function",
        function,
        "--format",
        ty,
        "--json",
        path.to_str().unwrap(),
    ];
    args.extend_from_slice(quant);
    args.extend_from_slice(extra);
    let (code, out, err) = run(&args);
    assert!(code == 0 || code == 1, "exit {code}: {err}");
    let json = serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    (code, out, json)
}

/// t = 256·σ(q/16) − 128 in binary64 (libm exp, a few ulps off at most): the correctly rounded
/// code by ties to even, when t is well clear of a half-integer (asserted).
fn sigmoid_i8_expected(q: i32) -> i32 {
    let t = 256.0 / (1.0 + (-(q as f64) / 16.0).exp()) - 128.0;
    assert!(
        ((t - t.floor()) - 0.5).abs() > 1e-9,
        "q = {q}: t = {t} too near a tie"
    );
    (t.round_ties_even() as i32).clamp(-128, 127)
}

#[test]
fn int8_table_sigmoid_lists_every_off_by_one_code() {
    let (code, terminal, r) = check("lumen_sigmoid_i8_table", "sigmoid", "i8", &SIGMOID_I8, &[]);
    assert_eq!(code, 1, "{terminal}");
    assert_eq!(r["schema"], "ulpgauge-quant/1");
    assert_eq!(r["coverage"]["kind"], "exhaustive");
    assert_eq!(r["coverage"]["inputs"], 256);
    let misses = r["misses"].as_array().unwrap();
    // "Add one half and cast" truncates toward zero: every negative t comes out one step high,
    // every positive one right (t < 0 exactly for q < 0, since σ(x) < 1/2 there).
    assert_eq!(misses.len(), 128);
    for (m, q) in misses.iter().zip(-128..0) {
        assert_eq!(m["q"], q);
        assert_eq!(m["x"].as_f64().unwrap(), q as f64 / 16.0, "x = 0.0625·q");
        let expected = sigmoid_i8_expected(q);
        assert_eq!(m["expected"], expected, "q = {q}");
        assert_eq!(m["output"], expected + 1, "q = {q}");
        assert_eq!(m["off_by"], 1);
    }
    let acc = &r["accuracy"];
    assert_eq!(acc["correctly_rounded"], 128);
    assert_eq!(acc["off_by_one"], 128);
    assert_eq!(acc["ties_away_only"], 0);
    // The worst: t = −113.4969… given as −112 (mpmath: 256·σ(−45/16) − 128 = −113.49698).
    assert_eq!(acc["worst"]["q"], -45);
    assert!((acc["max_steps"].as_f64().unwrap() - 1.49698).abs() < 1e-5);
    assert_eq!(acc["rounding"]["rule"], "toward-zero");
    // An output one step above RN(t) is t's other neighbouring code only when RN(t) is the
    // code below t; the rest lie beyond both neighbours, which no rounding rule produces.
    let beyond = (-128..0)
        .filter(|&q| {
            let t = 256.0 / (1.0 + (-(q as f64) / 16.0).exp()) - 128.0;
            f64::from(sigmoid_i8_expected(q)) > t
        })
        .count();
    assert_eq!(acc["rounding"]["other_neighbour"], 128 - beyond as u64);
    assert!(
        terminal.contains(&format!(
            "off by one step: 128 ({beyond} of them beyond t's two neighbouring codes)"
        )),
        "{terminal}"
    );
    assert_eq!(r["verdict"]["passed"], false);
    // The terminal fits one screen and shows the entries with input, output and expected code.
    assert!(terminal.lines().count() <= 24, "{terminal}");
    assert!(
        terminal.contains("q              x output expected"),
        "{terminal}"
    );
    assert!(
        terminal.contains("   -128             -8   -127     -128"),
        "{terminal}"
    );
    // A step's tolerance accepts it.
    let (code, _, _) = check(
        "lumen_sigmoid_i8_table",
        "sigmoid",
        "i8",
        &SIGMOID_I8,
        &["--max-steps", "1.5"],
    );
    assert_eq!(code, 0);
}

#[test]
fn rebuilt_u8_table_is_correctly_rounded() {
    let quant = [
        "--input-scale",
        "0.0625",
        "--input-zero-point",
        "128",
        "--output-scale",
        "0.00390625",
        "--output-zero-point",
        "0",
    ];
    let (code, _, r) = check("lumen_sigmoid_u8_table", "sigmoid", "u8", &quant, &[]);
    assert_eq!(code, 0);
    assert_eq!(r["accuracy"]["correctly_rounded"], 256);
    assert_eq!(r["accuracy"]["correctly_rounded_fraction"], 1.0);
    assert!(r["misses"].as_array().unwrap().is_empty());
    // σ(127/16)·256 = 255.9086 clamps to 255: measured against clamped t, half a step at most.
    assert!(r["accuracy"]["max_steps"].as_f64().unwrap() < 0.5);
}

#[test]
fn ties_rounded_away_are_counted_apart() {
    let quant = [
        "--input-scale",
        "0.05",
        "--input-zero-point",
        "0",
        "--output-scale",
        "0.1",
        "--output-zero-point",
        "-128",
    ];
    let (code, _, r) = check("lumen_relu6_i8_round", "relu6", "i8", &quant, &[]);
    assert_eq!(code, 1);
    let acc = &r["accuracy"];
    // t = relu6(q/20)/0.1 − 128 = q/2 − 128 for 0 ≤ q ≤ 120: a tie at each odd q (60), and
    // round-half-away differs from round-half-even on half of them (hand computation).
    assert_eq!(acc["ties"], 60);
    assert_eq!(acc["ties_away_only"], 30);
    assert_eq!(acc["off_by_one"], 30);
    assert_eq!(acc["max_steps"], 0.5);
    assert_eq!(acc["rounding"]["rule"], "nearest-ties-away");
    let first = &r["misses"][0];
    // q = 3: t = −126.5, to even −126, C's round() −127.
    assert_eq!(
        (
            first["q"].as_i64(),
            first["expected"].as_i64(),
            first["output"].as_i64()
        ),
        (Some(3), Some(-126), Some(-127))
    );
    let (code, _, _) = check(
        "lumen_relu6_i8_round",
        "relu6",
        "i8",
        &quant,
        &["--max-ulp", "0.5"],
    );
    assert_eq!(code, 0, "--max-ulp is --max-steps for integer codes");
}

#[test]
fn manifest_and_csv_hold_every_code() {
    let manifest =
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("kernels-under-test/lumen-edge-int8.toml");
    // The manifest names build/ next to it; point a copy at this test's build.
    let text = std::fs::read_to_string(&manifest).unwrap().replace(
        "library = \"build/liblumen_quant.so\"",
        &format!(
            "library = \"{}\"",
            kernels().join("liblumen_quant.so").display()
        ),
    );
    let copy = out_path("int8.toml");
    std::fs::write(&copy, text).unwrap();
    let json = out_path("int8-manifest.json");
    let csv = out_path("int8-manifest.csv");
    let (code, out, err) = run(&[
        "check",
        "--manifest",
        copy.to_str().unwrap(),
        "--json",
        json.to_str().unwrap(),
        "--csv",
        csv.to_str().unwrap(),
    ]);
    assert_eq!(code, 1, "{out}{err}");
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let kernels_run: Vec<_> = r["kernels"]
        .as_array()
        .unwrap()
        .iter()
        .map(|k| k["kernel"]["symbol"].as_str().unwrap().to_string())
        .collect();
    assert_eq!(
        kernels_run,
        [
            "lumen_sigmoid_i8_table",
            "lumen_sigmoid_u8_table",
            "lumen_relu6_i8_round"
        ]
    );
    let csv = std::fs::read_to_string(&csv).unwrap();
    assert_eq!(csv.lines().count(), 1 + 3 * 256);
    let row = csv
        .lines()
        .find(|l| l.starts_with("lumen_relu6_i8_round,relu6,i8,forward,3,"))
        .unwrap();
    // x = 3/20 exactly, t = −126.5 = −253/2.
    assert_eq!(
        row,
        "lumen_relu6_i8_round,relu6,i8,forward,3,3/20,-126.5,-253/2,-126,-127,-127,-1,0.5"
    );
}

#[test]
fn bad_quantization_options_exit_2_with_one_line_and_no_file() {
    let lib = kernels().join("liblumen_quant.so");
    let lib = lib.to_str().unwrap();
    let json = out_path("refused.json");
    let base = [
        "check",
        "--lib",
        lib,
        "--symbol",
        "lumen_sigmoid_i8_table",
        "--function",
        "sigmoid",
        "--json",
        json.to_str().unwrap(),
    ];
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "0.0625",
                "--input-zero-point",
                "0",
                "--output-zero-point",
                "0",
            ],
            "--output-scale is required",
        ),
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "0",
                "--input-zero-point",
                "0",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
            ],
            "--input-scale must be > 0",
        ),
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "1/16",
                "--input-zero-point",
                "0",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
            ],
            "--input-scale: '1/16' is not a decimal",
        ),
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "1",
                "--input-zero-point",
                "128",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
            ],
            "--input-zero-point 128 is outside the i8 range",
        ),
        (
            vec![
                "--format",
                "u8",
                "--input-scale",
                "1",
                "--input-zero-point",
                "0",
                "--output-scale",
                "1",
                "--output-zero-point",
                "-1",
            ],
            "--output-zero-point -1 is outside the u8 range",
        ),
        (
            vec![
                "--format",
                "u8",
                "--input-scale",
                "1",
                "--input-zero-point",
                "0.5",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
            ],
            "--input-zero-point must be an integer",
        ),
        (
            vec!["--format", "f32", "--input-scale", "1"],
            "--input-scale applies to --format i8 and u8 only",
        ),
        (
            vec!["--format", "f32", "--max-steps", "1"],
            "--max-steps applies to --format i8 and u8 only",
        ),
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "1",
                "--input-zero-point",
                "0",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
                "--sweep",
                "random",
            ],
            "--sweep does not apply to quantized kernels",
        ),
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "1",
                "--input-zero-point",
                "0",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
                "--max-steps",
                "-1",
            ],
            "--max-steps must be a finite number >= 0",
        ),
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "1",
                "--input-zero-point",
                "0",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
                "--max-steps",
                "1",
                "--max-ulp",
                "1",
            ],
            "give one",
        ),
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "1",
                "--input-zero-point",
                "0",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
                "--role",
                "gradient",
            ],
            "--role gradient does not apply",
        ),
        (
            vec![
                "--format",
                "i8",
                "--input-scale",
                "1",
                "--input-zero-point",
                "0",
                "--output-scale",
                "1",
                "--output-zero-point",
                "0",
                "--param-rounding",
                "format",
            ],
            "--param-rounding format",
        ),
    ];
    for (extra, want) in cases {
        let mut args = base.to_vec();
        args.extend(extra.iter());
        let (code, out, err) = run(&args);
        assert_eq!(code, 2, "{args:?}: {out}{err}");
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(err.contains(want), "{args:?}: {err}");
        assert!(!json.exists(), "{args:?} wrote a report");
    }
    // A manifest entry with a bad zero point names the file and entry.
    let bad = out_path("bad-int8.toml");
    std::fs::write(&bad, format!("library = \"{lib}\"\n[[kernel]]\nsymbol = \"lumen_sigmoid_i8_table\"\nfunction = \"sigmoid\"\nformat = \"i8\"\ninput-scale = \"0.0625\"\ninput-zero-point = 0\noutput-scale = \"0.00390625\"\noutput-zero-point = -129\n")).unwrap();
    let (code, _, err) = run(&["check", "--manifest", bad.to_str().unwrap()]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("kernel 1: output-zero-point -129 is outside the i8 range"),
        "{err}"
    );
    // eval refuses a code outside the type.
    let (code, _, err) = run(&[
        "eval",
        "--function",
        "sigmoid",
        "--format",
        "u8",
        "--input-scale",
        "1",
        "--input-zero-point",
        "0",
        "--output-scale",
        "1",
        "--output-zero-point",
        "0",
        "256",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("input 256 is outside the u8 range"), "{err}");
}
