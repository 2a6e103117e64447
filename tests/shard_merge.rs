//! `check --shard I/N` and `merge`: the merged report of N shards equals the report of one
//! unsharded run, figure for figure (timings and provenance aside), for every kind of sweep,
//! role and format; bad shard sets are refused with exit status 2 and no file.

mod kernel_support;

use kernel_support::{comparable, kernels};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

fn out_dir(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("shard-merge")
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

fn strings(args: &[&str]) -> Vec<String> {
    args.iter().map(|s| s.to_string()).collect()
}

fn read(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn kernel_reports(v: &Value) -> Vec<Value> {
    match v.get("kernels") {
        Some(list) => list.as_array().unwrap().iter().map(comparable).collect(),
        None => vec![comparable(v)],
    }
}

/// Runs `check ARGS` whole and in `n` shards, merges the shards, and compares.
fn whole_equals_merged(name: &str, check: &[&str], shard_counts: &[u64]) {
    let dir = out_dir(name);
    let whole = dir.join("whole.json");
    let mut args = strings(&["check"]);
    args.extend(strings(check));
    args.extend(strings(&["--quiet", "--no-progress", "--json"]));
    let (code, err) = ulpgauge(&[args.clone(), vec![whole.display().to_string()]].concat());
    assert!(
        [0, 1, 3].contains(&code),
        "{name}: check exited {code}: {err}"
    );
    let expected = kernel_reports(&read(&whole));
    for &n in shard_counts {
        let mut shards = Vec::new();
        for i in 1..=n {
            let path = dir.join(format!("shard-{i}-of-{n}.json"));
            let mut a = args.clone();
            a.extend([
                path.display().to_string(),
                "--shard".into(),
                format!("{i}/{n}"),
            ]);
            let (c, err) = ulpgauge(&a);
            assert!([0, 1, 3].contains(&c), "{name} {i}/{n}: {err}");
            let part = read(&path);
            for k in kernel_reports(&part) {
                assert_eq!(k["shard"]["index"], i, "{name}");
            }
            shards.push(path);
        }
        // Any order.
        shards.reverse();
        let merged = dir.join(format!("merged-{n}.json"));
        let mut m = strings(&["merge", "--quiet", "--json", merged.to_str().unwrap()]);
        m.extend(shards.iter().map(|p| p.display().to_string()));
        let (merge_code, err) = ulpgauge(&m);
        assert_eq!(merge_code, code, "{name} N={n}: merge exit status: {err}");
        let got = kernel_reports(&read(&merged));
        assert_eq!(got.len(), expected.len());
        for (g, e) in got.iter().zip(&expected) {
            for key in e.as_object().unwrap().keys() {
                assert_eq!(
                    g.get(key),
                    e.get(key),
                    "{name} N={n} {}: key {key}",
                    e["kernel"]["symbol"]
                );
            }
            assert!(
                g.get("shard").is_none(),
                "merged report keeps no shard state"
            );
        }
    }
}

#[test]
fn sampled_nan_runs_merge_across_many_shard_boundaries() {
    // The blended ELU is NaN for every x above ln(f32 max): one huge run, its ends found by
    // scanning gaps, cut by most shard boundaries when N is large (some shards measure only
    // a few inputs).
    whole_equals_merged(
        "blended-elu",
        &[
            "--builtin-kernel",
            "blended-elu",
            "--function",
            "elu",
            "--format",
            "f32",
            "--sweep",
            "dense,edge,random",
            "--per-binade",
            "4",
            "--points",
            "3000",
        ],
        &[2, 13, 64],
    );
}

#[test]
fn large_sampled_sweeps_merge_across_stretches_and_shards() {
    // 2.5 M random points (with a dense sweep, --points would be its significands per
    // binade): the sweep is measured in stretches of 2^20 inputs whose gap scans continue one
    // walk, so the unsharded run and every part cross stretch ends at different inputs; the
    // NaN run above ln(f32 max) is cut by both.
    whole_equals_merged(
        "blended-elu-large",
        &[
            "--builtin-kernel",
            "blended-elu",
            "--function",
            "elu",
            "--format",
            "f32",
            "--sweep",
            "edge,random",
            "--points",
            "2500000",
        ],
        &[3],
    );
}

#[test]
fn exhaustive_f16_with_crashes_merges() {
    // Crashes on every NaN input (measured and probed) and the non-finite runs they leave.
    whole_equals_merged(
        "crash-on-nan",
        &[
            "--builtin-kernel",
            "crash-on-nan",
            "--function",
            "tanh",
            "--format",
            "f16",
            "--sweep",
            "exhaustive",
        ],
        &[3],
    );
}

#[test]
fn flushed_subnormal_outputs_and_kinks_merge() {
    whole_equals_merged(
        "flush-to-zero",
        &[
            "--builtin-kernel",
            "flush-to-zero",
            "--function",
            "sigmoid",
            "--format",
            "bf16",
            "--sweep",
            "exhaustive",
        ],
        &[4],
    );
    whole_equals_merged(
        "relu-derivative",
        &[
            "--builtin-kernel",
            "next-up",
            "--function",
            "leaky-relu",
            "--role",
            "derivative",
            "--format",
            "f32",
            "--sweep",
            "dense,edge",
            "--per-binade",
            "8",
        ],
        &[3],
    );
}

#[test]
fn demo_manifest_merges_kernel_by_kernel() {
    // Forward, derivative and gradient roles; f32 sampled, 16-bit exhaustive; real kernels
    // through the worker process.
    // The shipped manifest, with its library paths pointing at the fresh build.
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/kernels-under-test/lumen-edge.toml"
    ))
    .unwrap()
    .replace("\"build/", &format!("\"{}/", kernels().display()));
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("shard-merge-manifest");
    std::fs::create_dir_all(&dir).unwrap();
    let manifest = dir.join("lumen-edge.toml");
    std::fs::write(&manifest, text).unwrap();
    whole_equals_merged(
        "manifest",
        &[
            "--manifest",
            manifest.to_str().unwrap(),
            "--sweep",
            "dense,edge",
            "--per-binade",
            "8",
        ],
        &[3],
    );
}

#[test]
fn exhaustive_f32_range_merges() {
    let lib = kernels().join("liblumen_edge.so");
    whole_equals_merged(
        "sigmoid-f32",
        &[
            "--lib",
            lib.to_str().unwrap(),
            "--symbol",
            "lumen_sigmoid_f32",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--sweep",
            "exhaustive",
            "--range=-2.5,-1.5",
        ],
        &[2, 5],
    );
}

/// Shard reports of a small check, for the bad-input tests.
fn small_shards(dir: &Path, n: u64, range: &str) -> Vec<PathBuf> {
    (1..=n)
        .map(|i| {
            let path = dir.join(format!("{range}-{i}.json"));
            let args = strings(&[
                "check",
                "--builtin-kernel",
                "reference",
                "--function",
                "relu",
                "--format",
                "bf16",
                "--quiet",
                "--no-progress",
                &format!("--range={range}"),
                "--shard",
                &format!("{i}/{n}"),
                "--json",
                path.to_str().unwrap(),
            ]);
            let (code, err) = ulpgauge(&args);
            assert_eq!(code, 0, "{err}");
            path
        })
        .collect()
}

fn merge_fails(dir: &Path, files: &[&Path], message: &str) {
    let out = dir.join("merged.json");
    let _ = std::fs::remove_file(&out);
    let mut args = strings(&["merge", "--json", out.to_str().unwrap()]);
    args.extend(files.iter().map(|p| p.display().to_string()));
    let (code, err) = ulpgauge(&args);
    assert_eq!(code, 2, "{err}");
    assert_eq!(err.trim().lines().count(), 1, "{err}");
    assert!(err.contains(message), "expected {message:?} in {err}");
    assert!(!out.exists(), "no partial file");
}

#[test]
fn incomplete_duplicate_or_mixed_shards_are_refused() {
    let dir = out_dir("bad");
    let a = small_shards(&dir, 3, "0,4");
    let b = small_shards(&dir, 3, "0,8");
    merge_fails(&dir, &[&a[0], &a[2]], "missing shard(s) 2/3");
    merge_fails(&dir, &[&a[0], &a[1], &a[1], &a[2]], "given twice");
    merge_fails(&dir, &[&a[0], &b[1], &a[2]], "not shards of the same check");
    let whole = dir.join("whole.json");
    let (code, _) = ulpgauge(&strings(&[
        "check",
        "--builtin-kernel",
        "reference",
        "--function",
        "relu",
        "--format",
        "bf16",
        "--quiet",
        "--json",
        whole.to_str().unwrap(),
    ]));
    assert_eq!(code, 0);
    merge_fails(&dir, &[&whole], "not a shard report");
    // A shard written by a build whose state has another layout (here: one without the
    // version field, like every build before it, and one from a later layout).
    for (version, expected) in [
        (None, "state version none"),
        (Some(999), "state version 999"),
    ] {
        let mut old = read(&a[1]);
        let shard = old["shard"].as_object_mut().unwrap();
        match version {
            None => shard.remove("state_version"),
            Some(v) => shard.insert("state_version".into(), v.into()),
        };
        let path = dir.join("other-build.json");
        std::fs::write(&path, old.to_string()).unwrap();
        merge_fails(&dir, &[&a[0], &path, &a[2]], expected);
    }
    // A state edited apart from its report, and a state whose accumulator is malformed.
    let mut edited = read(&a[1]);
    let points = edited["accuracy"]["points"].as_u64().unwrap();
    edited["accuracy"]["points"] = (points + 1).into();
    let path = dir.join("edited.json");
    std::fs::write(&path, edited.to_string()).unwrap();
    merge_fails(
        &dir,
        &[&a[0], &path, &a[2]],
        "the shard state does not give the report's accuracy.points",
    );
    let mut corrupted = read(&a[1]);
    corrupted["shard"]["state"]["stream"]["accuracy"]["histogram"] = "many".into();
    let path = dir.join("corrupted.json");
    std::fs::write(&path, corrupted.to_string()).unwrap();
    merge_fails(&dir, &[&a[0], &path, &a[2]], "unreadable shard state");
    let garbage = dir.join("garbage.json");
    std::fs::write(&garbage, "{ not json").unwrap();
    merge_fails(&dir, &[&garbage], "not a JSON report");
    merge_fails(&dir, &[&dir.join("absent.json")], "cannot read");
}

#[test]
fn bad_shard_specs_are_refused() {
    for bad in ["0/4", "5/4", "1/0", "x/2", "2"] {
        let (code, err) = ulpgauge(&strings(&[
            "check",
            "--builtin-kernel",
            "reference",
            "--function",
            "relu",
            "--format",
            "bf16",
            "--shard",
            bad,
        ]));
        assert_eq!(code, 2, "{bad}: {err}");
        assert!(err.contains("--shard"), "{err}");
    }
}

#[test]
fn patchy_nan_totals_summary_and_listing_merge_exactly() {
    // NaN on 8 of every 16 patterns for |x| >= 2^70: over a million runs in these ranges,
    // shard boundaries cutting runs anywhere. The merged totals, per-binade summary and the
    // listed runs equal the unsharded run's (every key is compared).
    let lib = kernels().join("liblumen_faulty.so");
    let lib = lib.to_str().unwrap();
    whole_equals_merged(
        "patchy-exhaustive",
        &[
            "--lib",
            lib,
            "--symbol",
            "lumen_sigmoid_f32_patchy",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--sweep",
            "exhaustive",
            "--range",
            "-2361183241434822606848,-590295810358705651712",
        ],
        &[2, 5],
    );
    whole_equals_merged(
        "patchy-sampled",
        &[
            "--lib",
            lib,
            "--symbol",
            "lumen_sigmoid_f32_patchy",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--list-runs",
            "7",
        ],
        &[3, 16],
    );
}
