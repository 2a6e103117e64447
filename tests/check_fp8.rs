//! `check` on the 8-bit demo kernels (OCP FP8, OFP8 v1.0) and the rounding diagnosis, end to end
//! through the worker.

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
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("check-fp8");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    let _ = std::fs::remove_file(&path);
    path
}

fn check(
    symbol: &str,
    function: &str,
    format: &str,
    extra: &[&str],
    json: &str,
) -> serde_json::Value {
    let lib = kernels().join("liblumen_edge.so");
    let path = out_path(json);
    let mut args = vec![
        "check",
        "--lib",
        lib.to_str().unwrap(),
        "--symbol",
        symbol,
        "--function",
        function,
        "--format",
        format,
        "--no-progress",
        "--json",
        path.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    let (code, _, err) = run(&args);
    assert!(code == 0 || code == 1, "exit {code}: {err}");
    serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap()
}

#[test]
fn fp8_kernels_are_checked_exhaustively() {
    for (symbol, function, format) in [
        ("lumen_sigmoid_e4m3", "sigmoid", "e4m3"),
        ("lumen_gelu_e4m3", "gelu", "e4m3"),
        ("lumen_gelu_e5m2", "gelu", "e5m2"),
    ] {
        let r = check(symbol, function, format, &[], &format!("{symbol}.json"));
        assert_eq!(r["format"], format);
        assert_eq!(r["sweep"]["coverage"], "exhaustive", "{symbol}");
        assert_eq!(r["sweep"]["inputs"], 256, "{symbol}");
        // Every finite input is measured: 254 in E4M3 (two NaNs), 248 in E5M2 (two
        // infinities and six NaNs), per the OFP8 v1.0 encodings.
        let finite = if format == "e4m3" { 254 } else { 248 };
        assert_eq!(r["accuracy"]["points"], finite, "{symbol}");
        // A float computation rounded once into 3 or 4 bits of precision stays faithful.
        assert_eq!(r["accuracy"]["faithful"], 1.0, "{symbol}");
    }
    // The derivative and gradient roles, every pattern too (g: a seeded E5M2 value).
    for (symbol, role) in [
        ("lumen_sigmoid_deriv_e5m2", "derivative"),
        ("lumen_sigmoid_grad_e5m2", "gradient"),
    ] {
        let r = check(
            symbol,
            "sigmoid",
            "e5m2",
            &["--role", role],
            &format!("{symbol}.json"),
        );
        assert_eq!(r["role"], role);
        assert_eq!(r["sweep"]["coverage"], "exhaustive", "{symbol}");
        assert_eq!(r["accuracy"]["points"], 248, "{symbol}");
        assert_eq!(r["verdict"]["exit_code"], 0, "{symbol}");
    }
}

#[test]
fn the_overflow_mode_is_part_of_the_format() {
    let r = check(
        "lumen_sigmoid_e4m3",
        "sigmoid",
        "e4m3",
        &["--fp8-overflow", "saturate"],
        "sigmoid-e4m3-sat.json",
    );
    assert_eq!(r["format"], "e4m3-sat");
    let (code, _, err) = run(&[
        "check",
        "--lib",
        "x.so",
        "--symbol",
        "s",
        "--function",
        "tanh",
        "--format",
        "f32",
        "--fp8-overflow",
        "saturate",
    ]);
    assert_eq!(code, 2);
    assert!(
        err.contains("--fp8-overflow applies to e4m3 and e5m2 only"),
        "{err}"
    );
}

#[test]
fn a_truncating_cast_is_diagnosed_as_rounding_toward_zero() {
    let r = check(
        "lumen_tanh_bf16_trunc",
        "tanh",
        "bf16",
        &[],
        "tanh-bf16-trunc.json",
    );
    let d = &r["accuracy"]["rounding"];
    assert_eq!(d["rule"], "toward-zero", "{d}");
    // Cutting bits off a float moves every value toward zero, never away (common practice:
    // truncation is round toward zero).
    assert_eq!(d["away_from_zero"], 0, "{d}");
    assert!(d["other_neighbour"].as_u64().unwrap() > 1000, "{d}");
    assert_eq!(d["toward_zero"], d["other_neighbour"]);
    let m = d["message"].as_str().unwrap();
    assert!(m.starts_with("the outputs look truncated: "), "{m}");
    // A correctly rounding kernel has no off-by-one point to explain.
    let r = check(
        "lumen_sigmoid_e4m3",
        "sigmoid",
        "e4m3",
        &[],
        "sigmoid-e4m3.json",
    );
    assert_eq!(r["accuracy"]["rounding"]["rule"], serde_json::Value::Null);
}

#[test]
fn the_diagnosis_merges_across_shards() {
    let whole = check("lumen_tanh_bf16_trunc", "tanh", "bf16", &[], "whole.json");
    let mut parts = Vec::new();
    for i in 1..=2 {
        let shard = format!("{i}/2");
        let name = format!("part{i}.json");
        check(
            "lumen_tanh_bf16_trunc",
            "tanh",
            "bf16",
            &["--shard", &shard],
            &name,
        );
        parts.push(out_path_keep(&name));
    }
    let merged = out_path("merged.json");
    let mut args = vec!["merge", "--quiet", "--json", merged.to_str().unwrap()];
    args.extend(parts.iter().map(|p| p.to_str().unwrap()));
    let (code, _, err) = run(&args);
    assert!(code == 0 || code == 1, "merge exit {code}: {err}");
    let merged: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&merged).unwrap()).unwrap();
    assert_eq!(
        merged["accuracy"]["rounding"],
        whole["accuracy"]["rounding"]
    );
}

fn out_path_keep(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("check-fp8")
        .join(name)
}
