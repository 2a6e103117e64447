//! `check --shard I/N` of a two-input gated kernel and `merge`: exhaustive 16-bit pair sweeps
//! (every b for a range of a) run whole and in shards; the merged report equals the whole
//! run's (its `seconds` aside), with the same exit status and the same heat map. Bad shard
//! sets are refused with one line, exit status 2 and no file.

mod kernel_support;

use half::f16;
use kernel_support::{comparable, kernels};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

fn out_dir(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("pair-merge")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn ulpgauge(args: &[String]) -> (i32, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(args)
        .output()
        .expect("run ulpgauge");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn read(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// `check` of a gated demo kernel with `extra` options, writing `json` (and `plot`).
fn check_args(symbol: &str, format: &str, extra: &[&str], json: &Path) -> Vec<String> {
    let lib = kernels().join("liblumen_gated.so");
    let mut args: Vec<String> = [
        "check",
        "--lib",
        lib.to_str().unwrap(),
        "--symbol",
        symbol,
        "--function",
        "swiglu",
        "--format",
        format,
        "--quiet",
        "--no-progress",
        "--json",
        json.to_str().unwrap(),
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    args.extend(extra.iter().map(|s| s.to_string()));
    args
}

/// Runs the check whole and in `n` shards (merged in reverse order); returns the whole
/// report after comparing it with the merged one, exit status and heat map included.
fn whole_equals_merged(name: &str, symbol: &str, format: &str, extra: &[&str], n: u64) -> Value {
    let dir = out_dir(name);
    let (whole, whole_svg) = (dir.join("whole.json"), dir.join("whole.svg"));
    let mut args = check_args(symbol, format, extra, &whole);
    args.extend(["--plot".to_string(), whole_svg.display().to_string()]);
    let (code, err) = ulpgauge(&args);
    assert!([0, 1].contains(&code), "{name}: check exited {code}: {err}");
    let expected = read(&whole);
    assert!(
        expected.get("shard").is_none(),
        "{name}: a whole run has no shard state"
    );
    let mut shards = Vec::new();
    for i in 1..=n {
        let path = dir.join(format!("shard-{i}.json"));
        let mut a = check_args(symbol, format, extra, &path);
        a.extend(["--shard".to_string(), format!("{i}/{n}")]);
        let (c, err) = ulpgauge(&a);
        assert!([0, 1].contains(&c), "{name} {i}/{n}: {err}");
        assert_eq!(read(&path)["shard"]["index"], i);
        shards.push(path.display().to_string());
    }
    shards.reverse();
    let (merged, merged_svg) = (dir.join("merged.json"), dir.join("merged.svg"));
    let mut m = vec!["merge".to_string(), "--quiet".to_string()];
    m.extend(shards);
    m.extend([
        "--json".to_string(),
        merged.display().to_string(),
        "--plot".to_string(),
        merged_svg.display().to_string(),
    ]);
    let (merge_code, err) = ulpgauge(&m);
    assert_eq!(merge_code, code, "{name}: merge exit status: {err}");
    assert_eq!(
        comparable(&read(&merged)),
        comparable(&expected),
        "{name}: merged != whole"
    );
    assert_eq!(
        std::fs::read_to_string(&merged_svg).unwrap(),
        std::fs::read_to_string(&whole_svg).unwrap(),
        "{name}: heat maps differ"
    );
    expected
}

/// The b for which RN16(a·b) overflows while b is finite: the `half` crate's own rounding of
/// the exact binary32 product (11 + 11 significant bits fit binary32's 24); binary16
/// overflows from 65520 on (IEEE 754-2019 §7.4).
fn overflowing_b(a: f32) -> u64 {
    (0..=0xffffu16)
        .map(f16::from_bits)
        .filter(|b| b.is_finite() && f16::from_f32(a * b.to_f32()).is_infinite())
        .count() as u64
}

#[test]
fn binary16_shards_merge_into_the_whole_sweep() {
    // [-20, -16): 256 binary16 values of a (step 2^-6), every b for each.
    let whole = whole_equals_merged("f16", "lumen_swiglu_f16", "f16", &["--range=-20,-16"], 3);
    assert_eq!(whole["coverage"]["pairs"], 256 * 65536);
    // The kernel rounds a·b to binary16 first: every overflow of that product is a spurious
    // infinity, since |silu(a)·b| < 1 here (σ(−16) ≈ 1.1e−7).
    // Negative binary16 patterns grow with the magnitude: -16 is 0xcc00, -20 is 0xcd00.
    assert_eq!(f16::from_bits(0xcc00).to_f32(), -16.0);
    assert_eq!(f16::from_bits(0xcd00).to_f32(), -20.0);
    let expected: u64 = (0xcc01u16..=0xcd00)
        .map(|a| overflowing_b(f16::from_bits(a).to_f32()))
        .sum();
    assert_eq!(whole["non_finite"]["spurious"], expected);
    assert_eq!(whole["verdict"]["exit_code"], 1);
}

#[test]
fn bfloat16_shards_merge_into_the_whole_sweep() {
    // [1, 4): 256 bfloat16 values of a (7 fraction bits: 128 per binade).
    let whole = whole_equals_merged(
        "bf16",
        "lumen_swiglu_bf16",
        "bf16",
        &["--range=1,4", "--max-ulp", "1"],
        3,
    );
    assert_eq!(whole["coverage"]["pairs"], 256 * 65536);
    assert_eq!(whole["format"], "bf16");
}

#[test]
fn bad_pair_shard_sets_are_refused_in_one_line() {
    let dir = out_dir("bad");
    let part = |name: &str, extra: &[&str]| {
        let path = dir.join(name);
        let (code, err) = ulpgauge(&check_args("lumen_swiglu_f16", "f16", extra, &path));
        assert!([0, 1].contains(&code), "{name}: {err}");
        path.display().to_string()
    };
    let range = "--range=-20,-19.9";
    let s1 = part("s1.json", &[range, "--shard", "1/3"]);
    let s2 = part("s2.json", &[range, "--shard", "2/3"]);
    let s3 = part("s3.json", &[range, "--shard", "3/3"]);
    let other_range = part("r3.json", &["--range=-20,-19.8", "--shard", "3/3"]);
    let other_role = part(
        "d3.json",
        &[range, "--shard", "3/3", "--role", "derivative-b"],
    );
    let whole = part("whole.json", &[range]);
    let one_input = dir.join("one.json");
    let lib = kernels().join("liblumen_edge.so");
    let (code, err) = ulpgauge(
        &[
            "check",
            "--lib",
            lib.to_str().unwrap(),
            "--symbol",
            "lumen_sigmoid_f32",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--sweep",
            "edge",
            "--shard",
            "3/3",
            "--quiet",
            "--json",
            one_input.to_str().unwrap(),
        ]
        .map(String::from),
    );
    assert!([0, 1].contains(&code), "{err}");
    let one_input = one_input.display().to_string();
    let out = dir.join("merged.json");
    for (files, needle) in [
        (vec![&s1, &s2], "missing shard(s) 3/3"),
        (vec![&s1, &s2, &s3, &s3], "given twice"),
        (vec![&s1, &s2, &other_range], "differs"),
        (vec![&s1, &s2, &other_role], "role differs"),
        (
            vec![&s1, &s2, &one_input],
            "a pair check and a one-input check",
        ),
        (vec![&whole], "not a shard report"),
    ] {
        let mut args = vec!["merge".to_string()];
        args.extend(files.iter().map(|s| s.to_string()));
        args.extend(["--json".to_string(), out.display().to_string()]);
        let (code, err) = ulpgauge(&args);
        assert_eq!(code, 2, "{needle}: {err}");
        assert!(err.contains(needle), "{needle}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
        assert!(!out.exists(), "{needle}: a file was written");
    }
    // A state edited apart from its report is refused, not merged.
    let mut edited = read(Path::new(&s2));
    edited["shard"]["state"]["acc"]["spurious_non_finite"] = Value::from(1u64 << 40);
    let edited_path = dir.join("edited.json");
    std::fs::write(&edited_path, edited.to_string()).unwrap();
    let (code, err) = ulpgauge(&[
        "merge".to_string(),
        s1.clone(),
        edited_path.display().to_string(),
        s3.clone(),
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("state"), "{err}");
    assert_eq!(err.trim().lines().count(), 1, "{err}");
}
