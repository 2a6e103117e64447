//! `check --inputs/--outputs`: recorded sets measured like called kernels, recorded g used for
//! gradients, parts merging into the whole, large binary32 sets read from disk, bad flags.
//!
//! The numpy, ml_dtypes and onnxruntime sides (and the mpmath comparison) are in
//! tests/recorder/test_recorder.py.

mod check_support;

use check_support::{evaluator, temp_dir};
use rayon::prelude::*;
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;
use ulpgauge::activation::Role;
use ulpgauge::check::Shard;
use ulpgauge::format::{Binary16, Binary32, Format};
use ulpgauge::recorded::write_patterns;

fn ulpgauge(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(args)
        .output()
        .expect("run ulpgauge")
}

fn save(dir: &Path, name: &str, format: &dyn Format, patterns: &[u32]) -> String {
    let path = dir.join(name);
    write_patterns(
        &path,
        format,
        patterns.len() as u64,
        patterns.iter().copied(),
    )
    .unwrap();
    path.display().to_string()
}

/// Runs a check that must write a JSON report; returns it with the exit status.
fn check(args: &[&str], json: &Path) -> (Value, i32) {
    let mut all = vec!["check"];
    all.extend_from_slice(args);
    let json_text = json.display().to_string();
    all.extend(["--json", &json_text, "--quiet"]);
    let out = ulpgauge(&all);
    let code = out.status.code().unwrap();
    assert!(
        code <= 1,
        "{all:?}: exit {code}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report = serde_json::from_str(&std::fs::read_to_string(json).unwrap()).unwrap();
    (report, code)
}

/// The sections that depend on the kernel's outputs alone.
const COMPARED: [&str; 7] = [
    "accuracy",
    "non_finite",
    "special_values",
    "thresholds",
    "kinks",
    "shape",
    "reference_failures",
];

fn same(a: &Value, b: &Value, keys: &[&str]) {
    for k in keys {
        assert_eq!(a[k], b[k], "{k} differs");
    }
}

#[test]
fn recorded_gradients_are_measured_with_their_own_g() {
    let f = &Binary16;
    let dir = temp_dir("recorded-grads");
    let d = evaluator("sigmoid", f, Role::Derivative);
    let xs: Vec<u32> = (0..1u32 << 16).collect();
    // Any g: 1 + k/1024 for k < 7, alternating sign (exact binary16 values).
    let gs: Vec<u32> = xs
        .iter()
        .map(|x| (0x3c00 + x % 7) | ((x & 1) << 15))
        .collect();
    let dx: Vec<u32> = xs
        .par_iter()
        .zip(&gs)
        .map(|(&x, &g)| {
            let g = rug::Rational::from_f64(f.to_f64(g)).unwrap();
            d.reference_scaled(x, Some(&g)).unwrap().bits
        })
        .collect();
    let (x, g, y) = (
        save(&dir, "x.npy", f, &xs),
        save(&dir, "g.npy", f, &gs),
        save(&dir, "dx.npy", f, &dx),
    );
    let base = [
        "--inputs",
        &x,
        "--outputs",
        &y,
        "--grads",
        &g,
        "--function",
        "sigmoid",
        "--format",
        "f16",
        "--role",
        "gradient",
    ];
    // dx = RN(g·σ′(x)) (the reference itself): correctly rounded everywhere, so within half an
    // ulp (IEEE 754-2019 4.3.1, round to nearest).
    let (r, code) = check(&base, &dir.join("r.json"));
    assert_eq!(code, 0);
    assert!(r["accuracy"]["max_ulp"].as_f64().unwrap() <= 0.5);
    assert_eq!(r["accuracy"]["correctly_rounded"], 1.0);
    assert_eq!(r["accuracy"]["coverage"], "exhaustive");
    // A kernel working from f(x) records x all the same.
    let mut from_output = base.to_vec();
    from_output.push("--from-output");
    let (r2, _) = check(&from_output, &dir.join("r2.json"));
    assert_eq!(r2["accuracy"], r["accuracy"]);
    // Against other g the same outputs are wrong.
    let other: Vec<u32> = gs.iter().map(|g| g ^ 0x0001).collect();
    let other = save(&dir, "g2.npy", f, &other);
    let mut wrong = base.to_vec();
    wrong[5] = &other;
    let (r3, _) = check(&wrong, &dir.join("r3.json"));
    assert!(r3["accuracy"]["correctly_rounded"].as_f64().unwrap() < 0.9);
}

/// σ over binary16, rounded, with 1 ulp added at every fifth input and NaN on a stretch.
fn perturbed_sigmoid(xs: &[u32]) -> Vec<u32> {
    let f = &Binary16;
    let e = evaluator("sigmoid", f, Role::Forward);
    xs.par_iter()
        .map(|&x| {
            let r = e.reference(x).unwrap().bits;
            match x {
                0x4800..=0x4810 | 0xc900..=0xc905 => f.quiet_nan(),
                _ if x % 5 == 0 && f.classify(r) == ulpgauge::format::Class::Normal => r + 1,
                _ => r,
            }
        })
        .collect()
}

fn merge_parts(dir: &Path, name: &str, xs: &[u32], ys: &[u32], count: u64) -> Value {
    let f = &Binary16;
    let mut parts = Vec::new();
    for index in 1..=count {
        let (from, to) = Shard { index, count }.bounds(xs.len() as u64);
        let (from, to) = (from as usize, to as usize);
        let x = save(dir, &format!("{name}x{index}.npy"), f, &xs[from..to]);
        let y = save(dir, &format!("{name}y{index}.npy"), f, &ys[from..to]);
        let shard = format!("{index}/{count}");
        let json = dir.join(format!("{name}{index}.json"));
        check(
            &[
                "--inputs",
                &x,
                "--outputs",
                &y,
                "--function",
                "sigmoid",
                "--format",
                "f16",
                "--shard",
                &shard,
            ],
            &json,
        );
        parts.push(json.display().to_string());
    }
    let merged = dir.join(format!("{name}-merged.json"));
    let mut args = vec!["merge".to_string()];
    args.extend(parts);
    args.extend([
        "--json".into(),
        merged.display().to_string(),
        "--quiet".into(),
    ]);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let out = ulpgauge(&args);
    assert!(
        out.status.code() == Some(0) || out.status.code() == Some(1),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_str(&std::fs::read_to_string(merged).unwrap()).unwrap()
}

#[test]
fn parts_of_a_recorded_set_merge_into_the_whole() {
    let f = &Binary16;
    let dir = temp_dir("recorded-parts");
    // Exhaustive, and a sample (every third pattern plus the stretches around the NaNs).
    let all: Vec<u32> = (0..1u32 << 16).collect();
    let sample: Vec<u32> = all
        .iter()
        .copied()
        .filter(|x| x % 3 == 0 || (0x47f0..0x4820).contains(x))
        .collect();
    for (name, xs) in [("all", all), ("sample", sample)] {
        let ys = perturbed_sigmoid(&xs);
        let x = save(&dir, &format!("{name}x.npy"), f, &xs);
        let y = save(&dir, &format!("{name}y.npy"), f, &ys);
        let (whole, _) = check(
            &[
                "--inputs",
                &x,
                "--outputs",
                &y,
                "--function",
                "sigmoid",
                "--format",
                "f16",
            ],
            &dir.join(format!("{name}.json")),
        );
        let coverage = if name == "all" {
            "exhaustive"
        } else {
            "sampled"
        };
        assert_eq!(whole["accuracy"]["coverage"], coverage);
        // One step off at every fifth normal output: 1 ulp ± half an ulp, or up to 2.5 ulps of
        // the binade below where RN(y) rounded up to a power of two.
        let max = whole["accuracy"]["max_ulp"].as_f64().unwrap();
        assert!((1.0..=2.5).contains(&max), "{max}");
        for count in [2, 3, 7] {
            let merged = merge_parts(&dir, &format!("{name}{count}-"), &xs, &ys, count);
            same(&merged, &whole, &COMPARED);
            assert_eq!(merged["sweep"]["inputs"], whole["sweep"]["inputs"]);
            for key in [
                "entries",
                "distinct_inputs",
                "repeated",
                "non_deterministic",
            ] {
                assert_eq!(merged["recorded"][key], whole["recorded"][key], "{key}");
            }
        }
        let runs = whole["non_finite"].as_array().unwrap();
        assert_eq!(runs.len(), 2, "{runs:?}");
        if name == "sample" {
            // The stretch around 0x4800 was recorded whole: exact ends; around 0xc900 only
            // every third pattern: the ends cannot be exact.
            assert_eq!(runs[0]["first"]["bits"], "0x4800");
            assert_eq!(runs[0]["exact_ends"], true);
            assert_eq!(runs[1]["exact_ends"], false);
        }
    }
}

#[test]
fn large_binary32_sets_are_read_from_disk_in_bit_order() {
    let f = &Binary32;
    let dir = temp_dir("recorded-large");
    // [1, 4): 2^24 inputs, more than a set sorted in memory holds.
    let xs: Vec<u32> = (0x3f80_0000u32..0x4080_0000).collect();
    let ys: Vec<u32> = xs.iter().map(|x| x + 1).collect();
    let x = save(&dir, "x.npy", f, &xs);
    let y = save(&dir, "y.npy", f, &ys);
    let (recorded, _) = check(
        &[
            "--inputs",
            &x,
            "--outputs",
            &y,
            "--function",
            "relu",
            "--format",
            "f32",
            "--range",
            "1,4",
        ],
        &dir.join("recorded.json"),
    );
    // The same kernel called: the built-in next-up kernel returns next_up(RN(relu(x))).
    let (called, _) = check(
        &[
            "--builtin-kernel",
            "next-up",
            "--function",
            "relu",
            "--format",
            "f32",
            "--sweep",
            "exhaustive",
            "--range",
            "1,4",
            "--no-progress",
        ],
        &dir.join("called.json"),
    );
    same(
        &recorded,
        &called,
        &["accuracy", "non_finite", "shape", "reference_failures"],
    );
    assert_eq!(recorded["accuracy"]["max_ulp"], 1.0);
    assert_eq!(recorded["sweep"]["inputs"], 1 << 24);
    // Out of bit order, a set this large cannot be sorted in memory.
    let reversed: Vec<u32> = xs.iter().rev().copied().collect();
    let rx = save(&dir, "rx.npy", f, &reversed);
    let out = ulpgauge(&[
        "check",
        "--inputs",
        &rx,
        "--outputs",
        &y,
        "--function",
        "relu",
        "--format",
        "f32",
        "--quiet",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("increasing bit order") && err.lines().count() == 1,
        "{err}"
    );
}

#[test]
fn flags_for_called_kernels_are_refused_with_recorded_outputs() {
    let f = &Binary16;
    let dir: PathBuf = temp_dir("recorded-flags");
    let xs: Vec<u32> = (0x3c00..0x3d00).collect();
    let x = save(&dir, "x.npy", f, &xs);
    let json = dir.join("r.json");
    let json = json.display().to_string();
    let base = [
        "check",
        "--inputs",
        &x,
        "--outputs",
        &x,
        "--function",
        "relu",
        "--format",
        "f16",
        "--json",
        &json,
    ];
    for (extra, words) in [
        (vec!["--lib", "x.so"], "--lib does not apply"),
        (vec!["--sweep", "dense"], "--sweep does not apply"),
        (vec!["--role", "gradient"], "needs --grads"),
        (vec!["--grads", x.as_str()], "--role gradient only"),
        (vec!["--range", "8,9"], "none of the 256"),
    ] {
        let mut args = base.to_vec();
        args.extend(extra);
        let out = ulpgauge(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(
            err.contains(words) && err.lines().count() == 1,
            "{args:?}: {err}"
        );
        assert!(!Path::new(&json).exists());
    }
    // relu(x) = x: the inputs are their own exact outputs.
    let out = ulpgauge(&base);
    assert_eq!(out.status.code(), Some(0));
}
