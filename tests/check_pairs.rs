//! `ulpgauge check` of a two-input gated kernel through the worker: the Lumen binary16 SwiGLU
//! that rounds a·b to binary16 before gating, over every b for a few a.

mod kernel_support;

use half::f16;
use kernel_support::kernels;
use std::path::PathBuf;
use std::process::Command;

fn check(args: &[&str], json: &str) -> (i32, serde_json::Value, String) {
    let out_dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("check-pairs");
    std::fs::create_dir_all(&out_dir).unwrap();
    let json_path = out_dir.join(json);
    let _ = std::fs::remove_file(&json_path);
    let lib = kernels().join("liblumen_gated.so");
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args([
            "check",
            "--lib",
            lib.to_str().unwrap(),
            "--symbol",
            "lumen_swiglu_f16",
        ])
        .args(["--function", "swiglu", "--format", "f16", "--no-progress"])
        .args(args)
        .arg("--json")
        .arg(&json_path)
        .output()
        .unwrap();
    let report = std::fs::read_to_string(&json_path)
        .map(|t| serde_json::from_str(&t).unwrap())
        .unwrap_or(serde_json::Value::Null);
    (
        out.status.code().unwrap_or(-1),
        report,
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// The b for which RN16(a·b) is ±∞ while b is finite: the `half` crate's own rounding of the
/// exact binary32 product (two binary16 significands of 11 bits fit binary32's 24). IEEE 754
/// binary16 overflows from 65520 = 65504 + ulp(65504)/2 on (IEEE 754-2019 §7.4).
fn overflowing_b(a: f32) -> u64 {
    (0..=0xffffu16)
        .map(f16::from_bits)
        .filter(|b| b.is_finite() && f16::from_f32(a * b.to_f32()).is_infinite())
        .count() as u64
}

#[test]
fn the_product_overflow_region_is_named_exactly() {
    // --range is half-open, [LO, HI): a = −20 alone. silu(−20)·b = −20·σ(−20)·b stays below 2^−9 in magnitude for every finite
    // binary16 b (σ(−20) ≈ 2.06e−9, from memory), so every infinite output is spurious.
    let (code, report, err) = check(&["--range=-20,-19.984375"], "swiglu-a20.json");
    assert_eq!(code, 1, "{err}");
    assert_eq!(report["coverage"]["kind"], "exhaustive");
    assert_eq!(report["coverage"]["pairs"], 65536);
    let expected = overflowing_b(-20.0);
    // |b| ≥ 65520/20 = 3276: per sign the 4 × 1024 patterns of [2^12, 2^16) and the 410 of
    // [3276, 4096) (step 2 there; binary16 has 10 fraction bits).
    assert_eq!(expected, 2 * (4 * 1024 + 410));
    let nf = &report["non_finite"];
    assert_eq!(nf["spurious"], expected);
    assert_eq!(nf["missing"], 0);
    assert_eq!(nf["regions_total"], 2);
    for r in nf["regions"].as_array().unwrap() {
        assert_eq!(r["a_cells"][0], "-[2^4, 2^5)");
        assert_eq!(r["pairs"], expected / 2);
        let b = (
            r["b_cells"][0].as_str().unwrap(),
            r["b_cells"][1].as_str().unwrap(),
        );
        assert!(
            b == ("[2^11, 2^12)", "[2^15, 2^16)") || b == ("-[2^15, 2^16)", "-[2^11, 2^12)"),
            "{b:?}"
        );
    }
    assert_eq!(report["verdict"]["exit_code"], 1);
}

#[test]
fn shards_add_up_to_the_whole_range() {
    let whole = check(&["--range=-20,-19.953125"], "swiglu-whole.json").1;
    let mut spurious = 0;
    let mut pairs = 0;
    let mut worst = 0.0f64;
    for shard in ["1/2", "2/2"] {
        let (_, r, err) = check(
            &["--range=-20,-19.953125", "--shard", shard],
            &format!("swiglu-shard-{}.json", &shard[..1]),
        );
        assert!(r.is_object(), "{err}");
        spurious += r["non_finite"]["spurious"].as_u64().unwrap();
        pairs += r["coverage"]["pairs"].as_u64().unwrap();
        worst = worst.max(r["accuracy"]["max_ulp"].as_f64().unwrap());
    }
    assert_eq!(pairs, 3 * 65536);
    assert_eq!(whole["coverage"]["pairs"], pairs);
    assert_eq!(whole["non_finite"]["spurious"], spurious);
    assert_eq!(whole["accuracy"]["max_ulp"].as_f64().unwrap(), worst);
}

#[test]
fn bad_pair_options_are_exit_2_naming_the_option() {
    for (args, needle) in [
        (&["--role", "derivative"][..], "derivative-a"),
        (&["--findings", "/tmp/x.csv"][..], "--findings"),
        (&["--sweep", "exhaustive,random"][..], "no other sweep kind"),
        (&["--role", "gradient"][..], "two inputs"),
    ] {
        let (code, report, err) = check(args, "bad.json");
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains(needle), "{args:?}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
        assert!(report.is_null());
    }
}

#[test]
fn the_heat_map_marks_the_overflow_cells() {
    let svg = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("check-pairs/swiglu.svg");
    let _ = std::fs::remove_file(&svg);
    let (code, _, err) = check(
        &["--range=-20,-19.984375", "--plot", svg.to_str().unwrap()],
        "swiglu-plot.json",
    );
    assert_eq!(code, 1, "{err}");
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(text.starts_with("<svg") && text.trim_end().ends_with("</svg>"));
    // Both runs of b binades of the row of a = −20 are drawn in the non-finite colour.
    let marked: Vec<_> = text
        .lines()
        .filter(|l| l.contains("fill=\"#4a148c\"><title>a -[2^4, 2^5)"))
        .collect();
    assert_eq!(marked.len(), 2, "{marked:?}");
    assert!(marked
        .iter()
        .any(|l| l.contains("b [2^11, 2^12) .. [2^15, 2^16)")));
    assert!(marked
        .iter()
        .any(|l| l.contains("b -[2^15, 2^16) .. -[2^11, 2^12)")));
}

#[test]
fn csv_and_junit_agree_with_the_json_report() {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("check-pairs");
    std::fs::create_dir_all(&dir).unwrap();
    let (csv, xml) = (dir.join("swiglu.csv"), dir.join("swiglu.xml"));
    let _ = std::fs::remove_file(&csv);
    let _ = std::fs::remove_file(&xml);
    let (code, report, err) = check(
        &[
            "--range=-20,-19.984375",
            "--csv",
            csv.to_str().unwrap(),
            "--junit",
            xml.to_str().unwrap(),
        ],
        "swiglu-csv.json",
    );
    assert_eq!(code, 1, "{err}");
    let text = std::fs::read_to_string(&csv).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("a_cell,b_cell,max_ulp,spurious_non_finite")
    );
    let (mut spurious, mut max, mut rows) = (0u64, 0f64, 0);
    for line in lines {
        // The cell labels hold a comma, so they are quoted: the last two fields are numbers.
        let mut fields = line.rsplitn(3, ',');
        spurious += fields.next().unwrap().parse::<u64>().unwrap();
        if let Ok(m) = fields.next().unwrap().parse::<f32>().map(f64::from) {
            max = max.max(m);
        }
        assert!(
            fields.next().unwrap().starts_with("\"-[2^4, 2^5)\""),
            "{line}"
        );
        rows += 1;
    }
    assert_eq!(spurious, report["non_finite"]["spurious"]);
    let json_max = report["accuracy"]["max_ulp"].as_f64().unwrap();
    assert_eq!(max, json_max as f32 as f64);
    // One row of a: at most every b cell of binary16 (66).
    assert!(rows > 0 && rows <= 66, "{rows}");
    let junit = std::fs::read_to_string(&xml).unwrap();
    assert_eq!(junit.matches("<testcase ").count(), 1, "{junit}");
    assert_eq!(junit.matches("<failure ").count(), 1, "{junit}");
    assert!(junit.contains("failures=\"1\""), "{junit}");
}
