//! Findings at any scale: a kernel with over a million non-finite runs gives exact totals, a
//! bounded listing chosen deterministically, a per-binade summary, a small report and a short
//! terminal summary; `--findings` streams every run (one row each).
//!
//! The kernel, `lumen_sigmoid_f32_patchy`, returns NaN exactly where a finite binary32 input
//! has |x| >= 2^70 and bit 3 of its pattern set, so every expected figure below follows from
//! that definition and the binary32 encoding (IEEE 754-2019 §3.4: 23 fraction bits, bias 127).

mod kernel_support;

use kernel_support::kernels;
use serde_json::Value;
use std::path::PathBuf;
use std::process::Command;

fn out_dir(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("findings-scale")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// The pattern of 2^e in binary32.
fn pow2_bits(e: i32) -> u32 {
    ((127 + e) as u32) << 23
}

#[test]
fn a_million_runs_are_counted_exactly_listed_briefly_and_streamed_whole() {
    let dir = out_dir("positive");
    let (json, findings) = (dir.join("r.json"), dir.join("runs.csv"));
    let lib = kernels().join("liblumen_faulty.so");
    // [2^69, 2^72): one clean binade, then 2^70 and 2^71 with the NaN pattern.
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(["check", "--lib", lib.to_str().unwrap()])
        .args([
            "--symbol",
            "lumen_sigmoid_f32_patchy",
            "--function",
            "sigmoid",
        ])
        .args(["--format", "f32", "--sweep", "exhaustive", "--no-progress"])
        .args(["--range", "590295810358705651712,4722366482869645213696"])
        .args(["--json", json.to_str().unwrap()])
        .args(["--findings", findings.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let terminal = String::from_utf8_lossy(&out.stdout);
    assert!(terminal.lines().count() <= 60, "{terminal}");
    assert!(
        terminal.contains("8,388,608 inputs in 1,048,576 runs"),
        "{terminal}"
    );

    // By definition: 2 binades of 2^23 patterns, half of them NaN, in runs of 8.
    let nan_inputs = 2u64 << 23 >> 1;
    let runs = nan_inputs / 8;
    let v: Value = serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    assert_eq!(v["schema"], "ulpgauge-check/2");
    assert_eq!(v["non_finite_total"]["inputs"], nan_inputs);
    assert_eq!(v["non_finite_total"]["runs"], runs);
    assert!(std::fs::metadata(&json).unwrap().len() < 1 << 20);

    // Listed: the 100 longest, all of length 8, so ties go to the lowest first patterns:
    // 2^70's pattern + 8, + 24, + 40, …
    let listed = v["non_finite"].as_array().unwrap();
    assert_eq!(listed.len(), 100);
    for (k, run) in listed.iter().enumerate() {
        let first = pow2_bits(70) + 8 + 16 * k as u32;
        assert_eq!(run["first"]["bits"], format!("0x{first:08x}"));
        assert_eq!(run["last"]["bits"], format!("0x{:08x}", first + 7));
        assert_eq!(
            (run["count"].as_u64(), run["kernel"].as_str()),
            (Some(8), Some("nan"))
        );
        assert_eq!(run["exact_ends"], true);
    }

    // The summary: one cell per binade with half of its inputs.
    let cells = v["non_finite_summary"].as_array().unwrap();
    let got: Vec<(String, u64, u64, String, String)> = cells
        .iter()
        .map(|c| {
            (
                c["binade"].as_str().unwrap().to_string(),
                c["runs"].as_u64().unwrap(),
                c["inputs"].as_u64().unwrap(),
                c["first"]["bits"].as_str().unwrap().to_string(),
                c["last"]["bits"].as_str().unwrap().to_string(),
            )
        })
        .collect();
    let cell = |e: i32| {
        (
            format!("+2^{e}"),
            runs / 2,
            nan_inputs / 2,
            format!("0x{:08x}", pow2_bits(e) + 8),
            format!("0x{:08x}", pow2_bits(e + 1) - 1),
        )
    };
    assert_eq!(got, vec![cell(70), cell(71)]);

    // Every run streamed: a header and one row per run, in bit order.
    let text = std::fs::read_to_string(&findings).unwrap();
    let mut rows = text.lines();
    assert!(rows
        .next()
        .unwrap()
        .starts_with("function,format,role,symbol,kind,"));
    let mut count = 0u64;
    let mut previous = 0u32;
    for row in rows {
        let fields: Vec<&str> = row.split(',').collect();
        assert_eq!(fields[4], "run");
        let first = u32::from_str_radix(fields[5].trim_start_matches("0x"), 16).unwrap();
        assert!(first > previous);
        assert_eq!(first & 0xf, 8);
        previous = first;
        count += 1;
    }
    assert_eq!(count, runs);
}

#[test]
fn findings_cannot_be_streamed_from_a_shard() {
    let dir = out_dir("shard");
    let findings = dir.join("runs.csv");
    let lib = kernels().join("liblumen_faulty.so");
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(["check", "--lib", lib.to_str().unwrap()])
        .args([
            "--symbol",
            "lumen_sigmoid_f32_patchy",
            "--function",
            "sigmoid",
        ])
        .args(["--format", "f32", "--shard", "1/2", "--quiet"])
        .args(["--findings", findings.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(String::from_utf8_lossy(&out.stderr).lines().count(), 1);
    assert!(!findings.exists());
}

#[test]
fn points_over_the_listing_limit_are_streamed_into_the_csv_and_the_findings_file() {
    // A kernel one step above the correctly rounded result everywhere (`next-up`): every
    // binary16 point errs by more than half an ulp and by at most 2.5: |ŷ − y| ≤ ulp(RN(y)) +
    // ulp(y)/2, and ulp(RN(y)) ≤ 2·ulp(y) when y rounds up to a power of two (common
    // practice).
    let dir = out_dir("points");
    let (json, csv, findings) = (dir.join("r.json"), dir.join("r.csv"), dir.join("f.csv"));
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(["check", "--builtin-kernel", "next-up", "--function", "tanh"])
        .args(["--format", "f16", "--quiet", "--no-progress"])
        .args(["--csv-points-over", "0.5"])
        .args(["--json", json.to_str().unwrap()])
        .args(["--csv", csv.to_str().unwrap()])
        .args(["--findings", findings.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(
        out.status.code().is_some_and(|c| c < 2),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: Value = serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let listed = v["accuracy"]["points_over_limit"].as_u64().unwrap();
    let points = v["accuracy"]["points"].as_u64().unwrap();
    assert!(listed > 60_000 && listed <= points, "{listed} of {points}");
    let text = std::fs::read_to_string(&csv).unwrap();
    let rows: Vec<Vec<&str>> = text.lines().map(|l| l.split(',').collect()).collect();
    let point_rows: Vec<&Vec<&str>> = rows.iter().filter(|r| r[4] == "point").collect();
    assert_eq!(point_rows.len() as u64, listed);
    assert!(rows.iter().any(|r| r[4] == "binade"));
    let mut previous = None;
    for r in &point_rows {
        let ulp: f64 = r[16].parse().unwrap();
        assert!(ulp > 0.5 && ulp <= 2.5, "{ulp}");
        let input = u32::from_str_radix(r[6].trim_start_matches("0x"), 16).unwrap();
        assert!(previous.is_none_or(|p| p < input));
        previous = Some(input);
    }
    let findings = std::fs::read_to_string(&findings).unwrap();
    let streamed = findings.lines().filter(|l| l.contains(",point,")).count();
    assert_eq!(streamed as u64, listed);
}
