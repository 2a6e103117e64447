//! `check --manifest` with two-input (gated) entries: a pair entry gives the report
//! `check --function swiglu …` gives with the same options, sharded manifest runs merge into
//! the unsharded one, and keys that do not fit an entry are refused in one line.

mod kernel_support;

use kernel_support::{comparable, kernels};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

fn out_dir(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("pair-manifest")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn ulpgauge(args: &[&str]) -> (i32, String) {
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

/// A manifest of the gated library with the entries given (TOML text after the header).
fn manifest(dir: &Path, entries: &str) -> PathBuf {
    let path = dir.join("m.toml");
    let text = format!(
        "library = {:?}\n{entries}",
        kernels().join("liblumen_gated.so").display().to_string()
    );
    std::fs::write(&path, text).unwrap();
    path
}

const SWIGLU_F16: &str = r#"
[[kernel]]
symbol = "lumen_sigmoid_f16"
function = "sigmoid"
format = "f16"
library = "LIBEDGE"

[[kernel]]
symbol = "lumen_swiglu_f16"
function = "swiglu"
format = "f16"
range = "-20,-19.953125"
max-ulp = 2.0

[[kernel]]
symbol = "lumen_swiglu_f16"
function = "swiglu"
format = "f16"
role = "derivative-b"
range = "1,1.01"
allow-non-finite = true
"#;

fn with_edge(text: &str) -> String {
    text.replace(
        "LIBEDGE",
        &kernels().join("liblumen_edge.so").display().to_string(),
    )
}

#[test]
fn a_pair_entry_reports_as_the_pair_check_does() {
    let dir = out_dir("same");
    let m = manifest(&dir, &with_edge(SWIGLU_F16));
    let out = dir.join("m.json");
    let (code, err) = ulpgauge(&[
        "check",
        "--manifest",
        m.to_str().unwrap(),
        "--quiet",
        "--json",
        out.to_str().unwrap(),
    ]);
    // The forward entry's spurious infinities fail it (exit 1 beats the others' 0).
    assert_eq!(code, 1, "{err}");
    let report = read(&out);
    let list = report["kernels"].as_array().unwrap();
    assert_eq!(list.len(), 3);
    assert_eq!(list[0]["function"], "sigmoid");
    let lib = kernels().join("liblumen_gated.so");
    for (k, extra) in [
        (1, &["--range=-20,-19.953125", "--max-ulp", "2"][..]),
        (
            2,
            &[
                "--role",
                "derivative-b",
                "--range=1,1.01",
                "--allow-non-finite",
            ][..],
        ),
    ] {
        let single = dir.join(format!("single-{k}.json"));
        let mut args = vec![
            "check",
            "--lib",
            lib.to_str().unwrap(),
            "--symbol",
            "lumen_swiglu_f16",
            "--function",
            "swiglu",
            "--format",
            "f16",
            "--quiet",
            "--json",
            single.to_str().unwrap(),
        ];
        args.extend(extra);
        let (c, err) = ulpgauge(&args);
        assert_eq!(c, list[k]["verdict"]["exit_code"], "{err}");
        assert_eq!(
            comparable(&list[k]),
            comparable(&read(&single)),
            "entry {k}"
        );
    }
    // dy/db = silu(a): finite and exact enough for every b, so the entry passes.
    assert_eq!(list[2]["role"], "derivative-b");
    assert_eq!(list[2]["verdict"]["exit_code"], 0);
    assert_eq!(list[1]["verdict"]["max_ulp_limit"], 2.0);
}

#[test]
fn sharded_manifest_runs_merge_into_the_unsharded_one() {
    let dir = out_dir("shards");
    let m = manifest(&dir, &with_edge(SWIGLU_F16));
    let whole = dir.join("whole.json");
    let run = |extra: &[&str], out: &Path| {
        let mut args = vec![
            "check",
            "--manifest",
            m.to_str().unwrap(),
            "--quiet",
            "--json",
            out.to_str().unwrap(),
        ];
        args.extend(extra);
        ulpgauge(&args)
    };
    let (code, err) = run(&[], &whole);
    assert_eq!(code, 1, "{err}");
    let parts: Vec<PathBuf> = (1..=2).map(|i| dir.join(format!("s{i}.json"))).collect();
    for (i, p) in parts.iter().enumerate() {
        let shard = format!("{}/2", i + 1);
        let (c, err) = run(&["--shard", &shard], p);
        assert!([0, 1].contains(&c), "{err}");
    }
    let merged = dir.join("merged.json");
    let (c, err) = ulpgauge(&[
        "merge",
        "--quiet",
        parts[1].to_str().unwrap(),
        parts[0].to_str().unwrap(),
        "--json",
        merged.to_str().unwrap(),
    ]);
    assert_eq!(c, code, "{err}");
    let list = |v: &Value| -> Vec<Value> {
        v["kernels"]
            .as_array()
            .unwrap()
            .iter()
            .map(comparable)
            .collect()
    };
    assert_eq!(list(&read(&merged)), list(&read(&whole)));
}

#[test]
fn entry_keys_that_do_not_fit_are_refused_in_one_line() {
    let dir = out_dir("bad");
    let pair =
        "[[kernel]]\nsymbol = \"lumen_swiglu_f16\"\nfunction = \"swiglu\"\nformat = \"f16\"\n";
    let one = format!(
        "[[kernel]]\nsymbol = \"lumen_sigmoid_f16\"\nfunction = \"sigmoid\"\nformat = \"f16\"\nlibrary = {:?}\n",
        kernels().join("liblumen_edge.so").display().to_string()
    );
    for (entries, extra, needle) in [
        (
            format!("{pair}variants = [\"a\", \"b\"]\n"),
            "",
            "key `variants`",
        ),
        (format!("{pair}role = \"derivative\"\n"), "", "derivative-a"),
        (
            format!("{pair}sweep = \"dense,bogus\"\n"),
            "",
            "unknown kind",
        ),
        (
            format!("{pair}sweep = \"exhaustive\"\nformat2 = 1\n"),
            "",
            "format2",
        ),
        (format!("{one}range = \"0,1\"\n"), "", "key `range`"),
        (format!("{one}role = \"derivative-a\"\n"), "", "two-input"),
        (format!("{pair}range = \"0,1\"\n"), "--csv", "--csv"),
        (
            format!("{pair}sweep = \"random\"\n"),
            "--shard",
            "exhaustive",
        ),
    ] {
        let m = manifest(&dir, &entries);
        let out = dir.join("out.json");
        let mut args = vec![
            "check",
            "--manifest",
            m.to_str().unwrap(),
            "--json",
            out.to_str().unwrap(),
        ];
        let csv_out = dir.join("out.csv");
        match extra {
            "--csv" => args.extend(["--csv", csv_out.to_str().unwrap()]),
            "--shard" => args.extend(["--shard", "1/2"]),
            _ => {}
        }
        let (code, err) = ulpgauge(&args);
        assert_eq!(code, 2, "{needle}: {err}");
        assert!(err.contains(needle), "{needle}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
        assert!(
            !out.exists() && !csv_out.exists(),
            "{needle}: a file was written"
        );
    }
    // Commands that run one-input kernels only name the two-input entry they cannot run.
    let m = manifest(&dir, &format!("{one}{pair}"));
    let (code, err) = ulpgauge(&[
        "matrix",
        "--manifest",
        m.to_str().unwrap(),
        "--build",
        "cc -O2",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("takes two inputs"), "{err}");
}
