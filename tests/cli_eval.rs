//! `ulpgauge eval`, `functions` and `batch` as a user's script sees them.

use std::process::Command;

fn ulpgauge(args: &[&str]) -> (i32, String, String) {
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

fn eval_json(args: &[&str]) -> serde_json::Value {
    let mut all = vec!["eval"];
    all.extend_from_slice(args);
    all.push("--json");
    let (code, out, err) = ulpgauge(&all);
    assert_eq!(code, 0, "{err}");
    serde_json::from_str(&out).unwrap()
}

#[test]
fn eval_json_contract() {
    // σ(1) in binary32 is 0x3f3b26a8 (0.7310585975646973; numpy.float32(1/(1+exp(-1))) agrees).
    let v = eval_json(&["sigmoid", "1", "--format", "f32"]);
    assert_eq!(v["rounded"]["bits"], "0x3f3b26a8");
    assert!((v["rounded"]["value"].as_f64().unwrap() - 0.7310585975646973).abs() < 1e-16);
    assert_eq!(v["input"]["bits"], "0x3f800000");
    // Bit-pattern input, leading zeros optional, either case.
    let v = eval_json(&["tanh", "0x3C00", "--format", "f16"]);
    assert_eq!(v["input"]["value"], 1.0);
    let v = eval_json(&["relu", "0x1", "--format", "f32"]);
    assert_eq!(v["rounded"]["bits"], "0x00000001");
    // Derivative at a kink: both one-sided values, the right one returned.
    let v = eval_json(&["relu6", "6", "--format", "bf16", "--derivative"]);
    assert_eq!(v["rounded"]["value"], 0.0);
    assert_eq!(v["kink"]["left"], 1.0);
}

#[test]
fn eval_states_the_rounded_input() {
    // 0.1 is not a binary16 value: RN(0.1) = 0x2e66 (numpy.float16(0.1) gives the same bits).
    let v = eval_json(&["relu", "0.1", "--format", "f16"]);
    assert_eq!(v["input"]["bits"], "0x2e66");
    assert_eq!(v["input_rounded_from"], "0.1");
    let v = eval_json(&["relu", "0.5", "--format", "f16"]);
    assert!(v["input_rounded_from"].is_null());
}

#[test]
fn eval_parameters_and_rounding() {
    let exact = eval_json(&[
        "leaky-relu",
        "-1",
        "--format",
        "f32",
        "--param",
        "alpha=0.01",
    ]);
    let f16 = eval_json(&[
        "leaky-relu",
        "-1",
        "--format",
        "f32",
        "--param",
        "alpha=0.01",
        "--param-rounding",
        "format",
    ]);
    // With --param-rounding format the parameter is RN_f32(0.01) itself.
    assert_eq!(f16["rounded"]["value"].as_f64().unwrap(), -(0.01f32 as f64));
    assert_eq!(
        exact["rounded"]["value"].as_f64().unwrap(),
        -(0.01f32 as f64)
    );
    let bf = eval_json(&[
        "leaky-relu",
        "-1",
        "--format",
        "bf16",
        "--param",
        "alpha=0.01",
        "--param-rounding",
        "f32",
    ]);
    // RN_bf16(RN_f32(0.01)) here equals RN_bf16(0.01) = 0xbc24 (ml_dtypes.bfloat16(-0.01) agrees).
    assert_eq!(bf["rounded"]["bits"], "0xbc24");
}

#[test]
fn bad_input_is_one_line_and_exit_2() {
    let cases: &[&[&str]] = &[
        &["eval", "sigmod", "1", "--format", "f32"],
        &["eval", "sigmoid", "1", "--format", "f64"],
        &["eval", "sigmoid", "1.2.3", "--format", "f32"],
        &["eval", "sigmoid", "0x10000", "--format", "f16"],
        &["eval", "sigmoid", "0xzz", "--format", "f16"],
        &[
            "eval",
            "elu",
            "1",
            "--format",
            "f32",
            "--param",
            "alpha=nan",
        ],
        &["eval", "elu", "1", "--format", "f32", "--param", "beta=2"],
        &["eval", "elu", "1", "--format", "f32", "--param", "alpha"],
        &["eval", "relu", "1", "--format", "f32", "--param", "alpha=1"],
    ];
    for args in cases {
        let (code, out, err) = ulpgauge(args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(out.is_empty(), "{args:?}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
        assert_eq!(err.trim_end().lines().count(), 1, "{args:?}: {err}");
        assert!(err.starts_with("ulpgauge: "), "{args:?}: {err}");
    }
}

#[test]
fn functions_lists_the_catalog() {
    let (code, out, _) = ulpgauge(&["functions", "--json"]);
    assert_eq!(code, 0);
    let list: serde_json::Value = serde_json::from_str(&out).unwrap();
    let names: Vec<&str> = list
        .as_array()
        .unwrap()
        .iter()
        .map(|e| e["name"].as_str().unwrap())
        .collect();
    for name in [
        "step",
        "sigmoid",
        "tanh",
        "relu",
        "leaky-relu",
        "elu",
        "swish",
        "silu",
        "gelu",
        "gelu-tanh",
        "softplus",
        "mish",
        "selu",
        "hard-sigmoid",
        "hard-swish",
        "relu6",
        "celu",
        "log-sigmoid",
        "softsign",
    ] {
        assert!(names.contains(&name), "{name}");
    }
}

#[test]
fn batch_reads_patterns_from_stdin() {
    use std::io::Write;
    let mut child = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(["batch", "relu", "--format", "f16"])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(b"0x3c00 0xbc00\n0x7e00")
        .unwrap();
    let out = child.wait_with_output().unwrap();
    assert_eq!(
        String::from_utf8_lossy(&out.stdout),
        "0x3c00 0x3c00\n0xbc00 0x0000\n0x7e00 0x7e00\n"
    );
}

/// A reader that stops early (`ulpgauge functions | head -1`) closes standard output: the
/// command must end with its own status, not a panic (101) on the failed write.
#[test]
fn closed_standard_output_is_not_a_crash() {
    use std::process::Stdio;
    for args in [
        &["functions"][..],
        &["eval", "sigmoid", "0.5", "--format", "f16"],
    ] {
        let mut child = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
            .args(args)
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap();
        drop(child.stdout.take());
        let out = child.wait_with_output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(0), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}

#[test]
fn one_vocabulary_function_flag_and_older_form() {
    // σ(1) in binary32 is 0x3f3b26a8 (numpy.float32(1/(1+exp(-1))) agrees), whichever form.
    let new = eval_json(&["--function", "sigmoid", "--format", "f32", "1"]);
    let old = eval_json(&["sigmoid", "1", "--format", "f32"]);
    assert_eq!(new["rounded"]["bits"], "0x3f3b26a8");
    assert_eq!(new, old);
    let (code, _, err) = ulpgauge(&["eval", "sigmoid", "1", "--format", "f32"]);
    assert_eq!(code, 0);
    assert!(err.contains("--function sigmoid"), "{err}");
    let (code, _, err) = ulpgauge(&["eval", "--function", "sigmoid", "-1", "--format", "f32"]);
    assert_eq!(code, 0, "{err}");
    assert!(err.is_empty(), "the new form prints no note: {err}");
    // Bad input: exit 2, one line.
    for args in [
        &["eval", "--function", "sigmoid", "1", "2", "--format", "f32"][..],
        &["eval", "--format", "f32"][..],
        &["batch", "--format", "f32"][..],
    ] {
        let (code, _, err) = ulpgauge(args);
        assert_eq!(code, 2, "{args:?}: {err}");
    }
    // batch takes --function too, and its older positional form.
    let run = |args: &[&str]| {
        let mut child = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
            .args(args)
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .unwrap();
        use std::io::Write;
        child.stdin.take().unwrap().write_all(b"0x3c00\n").unwrap();
        let out = child.wait_with_output().unwrap();
        assert!(out.status.success());
        String::from_utf8_lossy(&out.stdout).into_owned()
    };
    let new = run(&["batch", "--function", "tanh", "--format", "f16"]);
    assert_eq!(new, run(&["batch", "tanh", "--format", "f16"]));
    // tanh(1) = 0.76159... rounds to binary16 0x3a18 (numpy.float16(numpy.tanh(1)) agrees).
    assert_eq!(new.trim(), "0x3c00 0x3a18");
}

#[test]
fn fp8_eval_and_batch_follow_the_ofp8_specification() {
    // OFP8 v1.0: E4M3 max normal 448 (0x7e), its NaN S.1111.111 (0x7f), no infinities; 464 is
    // the midpoint of 448 and 480 and ties to even (448); above it the non-saturating mode
    // gives NaN and the saturating one 448.
    let v = eval_json(&["--function", "relu", "--format", "e4m3", "464"]);
    assert_eq!(v["input"]["bits"], "0x7e");
    let v = eval_json(&["--function", "relu", "--format", "e4m3", "465"]);
    assert_eq!(v["input"]["bits"], "0x7f");
    assert_eq!(v["rounded"]["value"], "nan");
    let v = eval_json(&[
        "--function",
        "relu",
        "--format",
        "e4m3",
        "--fp8-overflow",
        "saturate",
        "465",
    ]);
    assert_eq!(v["format"], "e4m3-sat");
    assert_eq!(v["rounded"]["bits"], "0x7e");
    // σ(1) = 0.7310585786…: in E5M2 (p = 3) the neighbours are 0.625 and 0.75, so 0.75 (0x3a);
    // in E4M3 (p = 4) 0.6875 and 0.75, so 0.75 (0x34) (values written out from the formats).
    let v = eval_json(&["--function", "sigmoid", "--format", "e5m2", "1"]);
    assert_eq!(v["rounded"]["bits"], "0x3a");
    let v = eval_json(&["--function", "sigmoid", "--format", "e4m3", "1"]);
    assert_eq!(v["rounded"]["bits"], "0x34");
    // E5M2 has infinities; in the saturating mode relu(+inf) is clamped to 57344 (0x7b).
    use std::io::Write;
    let mut child = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args([
            "batch",
            "--function",
            "relu",
            "--format",
            "e5m2",
            "--fp8-overflow",
            "saturate",
        ])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(b"0x7c 0xfc 0x7b 0x7d")
        .unwrap();
    let out = child.wait_with_output().unwrap();
    assert_eq!(
        String::from_utf8_lossy(&out.stdout),
        "0x7c 0x7b\n0xfc 0x00\n0x7b 0x7b\n0x7d 0x7e\n"
    );
    let (code, _, err) = ulpgauge(&["eval", "--function", "relu", "--format", "e4m3", "inf"]);
    assert_eq!(code, 2);
    assert_eq!(err.trim(), "ulpgauge: input inf: e4m3 has no infinities");
    let (code, _, err) = ulpgauge(&[
        "eval",
        "--function",
        "relu",
        "--format",
        "f16",
        "--fp8-overflow",
        "nan",
        "1",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("applies to e4m3 and e5m2 only"), "{err}");
}

#[test]
fn mixed_formats_read_the_input_in_one_format_and_round_into_the_other() {
    // SiLU(1.5) = 1.5/(1 + e^-1.5) = 1.2263617142904654…; in binary32 0x3f9cf96c (mpmath at
    // 200 bits, then numpy.float32); the input 1.5 given as bfloat16 0x3fc0.
    let v = eval_json(&[
        "--function",
        "silu",
        "--input-format",
        "bf16",
        "--output-format",
        "f32",
        "0x3fc0",
    ]);
    assert_eq!(v["input_format"], "bf16");
    assert_eq!(v["format"], "f32");
    assert_eq!(v["rounded"]["bits"], "0x3f9cf96c");
    // tanh of the binary32 nearest 0.3 (0x3e99999a), rounded into bfloat16: 0x3e95 (mpmath,
    // then ml_dtypes.bfloat16 of the float32 value, one rounding here).
    let v = eval_json(&[
        "--function",
        "tanh",
        "--input-format",
        "f32",
        "--output-format",
        "bf16",
        "0.3",
    ]);
    assert_eq!(v["input"]["bits"], "0x3e99999a");
    assert_eq!(v["rounded"]["bits"], "0x3e95");
    let (code, _, err) = ulpgauge(&["eval", "--function", "tanh", "--input-format", "f32", "1"]);
    assert_eq!(code, 2);
    assert!(err.contains("--output-format"), "{err}");
}

#[test]
fn gated_functions_take_a_pair() {
    // silu(−2)·(−3) = 6/(1 + e^2) = 0.71521753… (binary64 here; the binary16 spacing near 0.7
    // is 2^−11, far coarser than binary64's error).
    let v = eval_json(&["--function", "swiglu", "--format", "f16", "-2", "-3"]);
    // Checked as "within half an ulp", 2^−12 in [0.5, 1) (IEEE 754 binary16, p = 11); the
    // `half` crate's from_f64 rounds through binary32 (see DEVELOPERS.md), so it is not used.
    let exact = 6.0 / (1.0 + 2f64.exp());
    let got = v["rounded"]["value"].as_f64().unwrap();
    assert!((got - exact).abs() <= 2f64.powi(-12), "{got} vs {exact}");
    assert_eq!(got * 2048.0, (got * 2048.0).round());
    assert_eq!(v["a"]["bits"], "0xc000");
    assert_eq!(v["b"]["bits"], "0xc200");
    assert_eq!(v["arity"], 2);
    // ∂/∂b is silu(a) alone: silu(2) = 2/(1 + e^−2) = 1.7615941559557649.
    let v = eval_json(&[
        "--function",
        "swiglu",
        "--format",
        "f32",
        "--role",
        "derivative-b",
        "2",
        "7",
    ]);
    assert_eq!(
        v["rounded"]["value"].as_f64().unwrap(),
        (2.0 / (1.0 + (-2f64).exp())) as f32 as f64
    );
    // One input, or --derivative without saying which one: exit 2, one line.
    for args in [
        &["eval", "--function", "reglu", "--format", "f16", "1"][..],
        &[
            "eval",
            "--function",
            "reglu",
            "--format",
            "f16",
            "--derivative",
            "1",
            "2",
        ][..],
        &[
            "eval",
            "--function",
            "sigmoid",
            "--format",
            "f16",
            "--role",
            "derivative-a",
            "1",
        ][..],
    ] {
        let (code, _, err) = ulpgauge(args);
        assert_eq!(code, 2, "{args:?}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
    }
    let (_, out, _) = ulpgauge(&["functions", "--json"]);
    let all: serde_json::Value = serde_json::from_str(&out).unwrap();
    let gated: Vec<_> = all
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["arity"] == 2)
        .map(|f| f["name"].as_str().unwrap().to_string())
        .collect();
    assert_eq!(gated, ["swiglu", "geglu", "geglu-tanh", "reglu"]);
}

#[test]
fn batch_reads_gated_pairs() {
    use std::io::Write;
    let run = |input: &str| {
        let mut child = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
            .args(["batch", "--function", "reglu", "--format", "f16"])
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .unwrap();
        child
            .stdin
            .take()
            .unwrap()
            .write_all(input.as_bytes())
            .unwrap();
        let out = child.wait_with_output().unwrap();
        (
            out.status.code(),
            String::from_utf8_lossy(&out.stdout).into_owned(),
        )
    };
    // relu(3)·5 = 15 = 0x4b80 in binary16 (1.875·2^3); 0·∞ is NaN (IEEE 754-2019 §7.2).
    let (code, out) = run("0x4200 0x4500\n0x0000 0x7c00\n");
    assert_eq!(code, Some(0));
    assert_eq!(out, "0x4200 0x4500 0x4b80\n0x0000 0x7c00 0x7e00\n");
    let (code, out) = run("0x4200 0x4500 0x3c00");
    assert_eq!(code, Some(2));
    assert!(out.is_empty());
}
