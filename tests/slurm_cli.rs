//! `ulpgauge slurm`: bad input refused with exit status 2 and nothing written; the written
//! scripts run as Slurm would run them (its documented environment: SLURM_ARRAY_TASK_ID,
//! SLURM_CPUS_PER_TASK) give a merged report equal to the unsharded run, a repeated task gives
//! the same shard, a missing shard is named; submit.sh passes sbatch the documented options.
//! The real cluster run is tests/slurm/run.sh.

mod kernel_support;

use kernel_support::{comparable, kernels};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn out_dir(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("slurm-cli")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn ulpgauge(args: &[String]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(args)
        .output()
        .expect("run ulpgauge")
}

fn code(out: &Output) -> i32 {
    out.status.code().unwrap_or(-1)
}

fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn strings(args: &[&str]) -> Vec<String> {
    args.iter().map(|s| s.to_string()).collect()
}

fn read(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// The check line of a demo kernel, exhaustive over its 16-bit format.
fn demo_check(lib: &str, symbol: &str, function: &str) -> Vec<String> {
    let lib = kernels().join(lib).display().to_string();
    strings(&[
        "--lib",
        &lib,
        "--symbol",
        symbol,
        "--function",
        function,
        "--format",
        "f16",
    ])
}

/// `ulpgauge slurm --shards N --dir DIR EXTRA -- CHECK`.
fn generate(dir: &Path, shards: u64, extra: &[&str], check: &[String]) -> Output {
    let mut args = strings(&["slurm", "--shards", &shards.to_string(), "--dir"]);
    args.push(dir.display().to_string());
    args.extend(strings(extra));
    args.push("--".into());
    args.extend(check.iter().cloned());
    ulpgauge(&args)
}

/// Runs a generated script with bash, as a job of array task `task` would run.
fn run_script(script: &Path, task: Option<u64>) -> Output {
    let mut cmd = Command::new("bash");
    cmd.arg(script)
        .env_remove("SLURM_ARRAY_TASK_ID")
        .env("SLURM_CPUS_PER_TASK", "1");
    if let Some(task) = task {
        cmd.env("SLURM_ARRAY_TASK_ID", task.to_string());
    }
    cmd.output().expect("run bash")
}

fn unsharded(dir: &Path, check: &[String]) -> (i32, Value) {
    let whole = dir.join("whole.json");
    let mut args = strings(&["check"]);
    args.extend(check.iter().cloned());
    args.extend(strings(&["--quiet", "--no-progress", "--json"]));
    args.push(whole.display().to_string());
    let out = ulpgauge(&args);
    (code(&out), read(&whole))
}

#[test]
fn tasks_and_merge_give_the_unsharded_report() {
    let dir = out_dir("demo");
    let check = demo_check("liblumen_edge.so", "lumen_sigmoid_f16", "sigmoid");
    let (whole_code, whole) = unsharded(&dir, &check);
    let jobs = dir.join("job");
    let out = generate(&jobs, 3, &[], &check);
    assert_eq!(code(&out), 0, "{}", stderr(&out));
    for file in ["shard.sbatch", "merge.sbatch", "submit.sh"] {
        assert!(jobs.join(file).is_file(), "{file}");
    }
    let script = jobs.join("shard.sbatch");
    for task in 1..=3 {
        let out = run_script(&script, Some(task));
        assert_eq!(code(&out), 0, "task {task}: {}", stderr(&out));
        let report = read(&jobs.join(format!("shards/shard-{task}-of-3.json")));
        assert_eq!(report["shard"]["index"], task);
        assert_eq!(report["shard"]["count"], 3);
    }
    // A requeued task (the same SLURM_ARRAY_TASK_ID again) measures the same shard.
    let first = read(&jobs.join("shards/shard-2-of-3.json"));
    assert_eq!(code(&run_script(&script, Some(2))), 0);
    let again = read(&jobs.join("shards/shard-2-of-3.json"));
    assert_eq!(comparable(&first), comparable(&again));

    let out = run_script(&jobs.join("merge.sbatch"), None);
    assert_eq!(code(&out), whole_code, "{}", stderr(&out));
    assert_eq!(
        comparable(&read(&jobs.join("merged.json"))),
        comparable(&whole)
    );

    // A lost shard: the merge refuses, names it, and leaves no merged report.
    std::fs::remove_file(jobs.join("shards/shard-2-of-3.json")).unwrap();
    let out = run_script(&jobs.join("merge.sbatch"), None);
    assert_eq!(code(&out), 2);
    assert!(
        stderr(&out).contains("missing shard(s) 2/3"),
        "{}",
        stderr(&out)
    );
    assert!(
        stderr(&out).contains("submit.sh --missing"),
        "{}",
        stderr(&out)
    );
    assert!(!jobs.join("merged.json").exists());
    // Running that task again completes the set.
    assert_eq!(code(&run_script(&script, Some(2))), 0);
    assert_eq!(
        code(&run_script(&jobs.join("merge.sbatch"), None)),
        whole_code
    );
    assert_eq!(
        comparable(&read(&jobs.join("merged.json"))),
        comparable(&whole)
    );

    // Not started as an array task, or a task outside 1..N: refused, no report.
    for task in [None, Some(0), Some(4)] {
        let out = run_script(&script, task);
        assert_eq!(code(&out), 2, "{task:?}");
        assert!(
            stderr(&out).contains("is not one of 1..3"),
            "{}",
            stderr(&out)
        );
    }
}

#[test]
fn a_crashing_kernel_is_a_finding_and_a_dead_check_a_failed_task() {
    let dir = out_dir("crash");
    // lumen_faulty.c: lumen_tanh_f16_crash reads a null table at exactly x = 9.0 (0x4880).
    let lib = dir.join("liblumen_faulty.so");
    std::fs::copy(kernels().join("liblumen_faulty.so"), &lib).unwrap();
    let check = strings(&[
        "--lib",
        &lib.display().to_string(),
        "--symbol",
        "lumen_tanh_f16_crash",
        "--function",
        "tanh",
        "--format",
        "f16",
    ]);
    let (whole_code, whole) = unsharded(&dir, &check);
    assert_eq!(whole_code, 3);
    let jobs = dir.join("job");
    assert_eq!(code(&generate(&jobs, 2, &[], &check)), 0);
    let script = jobs.join("shard.sbatch");
    let mut logs = String::new();
    for task in 1..=2 {
        let out = run_script(&script, Some(task));
        assert_eq!(code(&out), 0, "task {task}: {}", stderr(&out));
        logs += &String::from_utf8_lossy(&out.stdout);
    }
    // The task that met the crash still succeeds: its report carries the crash.
    assert!(logs.contains("check exit status 3"), "{logs}");
    let out = run_script(&jobs.join("merge.sbatch"), None);
    assert_eq!(code(&out), 3, "{}", stderr(&out));
    let merged = read(&jobs.join("merged.json"));
    assert_eq!(merged["crash"]["input"]["bits"], "0x4880");
    assert_eq!(comparable(&merged), comparable(&whole));

    // A check that dies without a report (here: the library is gone) fails the task and
    // leaves no shard behind, even where an earlier attempt had written one.
    std::fs::remove_file(&lib).unwrap();
    let out = run_script(&script, Some(1));
    assert_eq!(code(&out), 2, "{}", stderr(&out));
    assert!(
        stderr(&out).contains("no report written"),
        "{}",
        stderr(&out)
    );
    assert!(!jobs.join("shards/shard-1-of-2.json").exists());
}

/// A stand-in for sbatch that records its arguments and answers as `sbatch --parsable` does
/// ("jobid" or "jobid;cluster", sbatch(1)).
fn fake_sbatch(dir: &Path) -> PathBuf {
    let bin = dir.join("bin");
    std::fs::create_dir_all(&bin).unwrap();
    let script = bin.join("sbatch");
    let log = dir.join("sbatch.log");
    std::fs::write(
        &script,
        format!(
            "#!/bin/bash\nn=100\n[ -f {log:?} ] && n=$((100 + $(wc -l < {log:?})))\necho \"$*\" >> {log:?}\necho \"$n;testcluster\"\n"
        ),
    )
    .unwrap();
    Command::new("chmod")
        .arg("+x")
        .arg(&script)
        .status()
        .unwrap();
    bin
}

fn submit(jobs: &Path, bin: &Path, args: &[&str]) -> Output {
    let path = format!("{}:{}", bin.display(), std::env::var("PATH").unwrap());
    Command::new("bash")
        .arg(jobs.join("submit.sh"))
        .args(args)
        .env("PATH", path)
        .output()
        .expect("run submit.sh")
}

#[test]
fn submit_queues_the_array_then_the_merge_behind_it() {
    let dir = out_dir("submit");
    let check = demo_check("liblumen_edge.so", "lumen_sigmoid_f16", "sigmoid");
    let jobs = dir.join("job");
    let out = generate(&jobs, 4, &["--parallel", "2", "--sbatch=--time=30"], &check);
    assert_eq!(code(&out), 0, "{}", stderr(&out));
    let shard = std::fs::read_to_string(jobs.join("shard.sbatch")).unwrap();
    for line in [
        "#SBATCH --array=1-4%2",
        "#SBATCH --requeue",
        "#SBATCH --time=30",
        "#SBATCH --cpus-per-task=1",
    ] {
        assert!(shard.lines().any(|l| l == line), "{line}");
    }
    assert!(shard.contains("/slurm-%A_%a.out"));
    let bin = fake_sbatch(&dir);
    let log = dir.join("sbatch.log");

    let out = submit(&jobs, &bin, &[]);
    assert_eq!(code(&out), 0, "{}", stderr(&out));
    let shard_script = jobs.join("shard.sbatch").display().to_string();
    let merge_script = jobs.join("merge.sbatch").display().to_string();
    let calls = std::fs::read_to_string(&log).unwrap();
    let calls: Vec<&str> = calls.lines().collect();
    // sbatch(1): --array=<indexes>[%<max running>]; afterok on an array job waits for all its
    // tasks; --kill-on-invalid-dep=yes cancels the job once the dependency can never be met.
    assert_eq!(calls[0], format!("--parsable --array=1-4%2 {shard_script}"));
    assert_eq!(
        calls[1],
        format!("--parsable --dependency=afterok:100 --kill-on-invalid-dep=yes {merge_script}")
    );
    let recorded = std::fs::read_to_string(jobs.join("jobs.txt")).unwrap();
    assert_eq!(recorded.lines().last(), Some("100 101 1-4"));

    // Shards 1 and 3 written: --missing resubmits 2 and 4.
    std::fs::create_dir_all(jobs.join("shards")).unwrap();
    for i in [1, 3] {
        std::fs::write(jobs.join(format!("shards/shard-{i}-of-4.json")), "{}").unwrap();
    }
    assert_eq!(code(&submit(&jobs, &bin, &["--missing"])), 0);
    assert_eq!(code(&submit(&jobs, &bin, &["3", "01"])), 0);
    let calls = std::fs::read_to_string(&log).unwrap();
    let calls: Vec<&str> = calls.lines().collect();
    assert_eq!(calls[2], format!("--parsable --array=2,4%2 {shard_script}"));
    assert_eq!(calls[4], format!("--parsable --array=3,1%2 {shard_script}"));
    // Every report present: the merge alone, with no dependency.
    for i in [2, 4] {
        std::fs::write(jobs.join(format!("shards/shard-{i}-of-4.json")), "{}").unwrap();
    }
    assert_eq!(code(&submit(&jobs, &bin, &["--missing"])), 0);
    let calls = std::fs::read_to_string(&log).unwrap();
    assert_eq!(
        calls.lines().last(),
        Some(format!("--parsable {merge_script}").as_str())
    );
    // Not a shard: refused before sbatch.
    let before = std::fs::read_to_string(&log).unwrap().lines().count();
    for bad in ["0", "5", "x", "--all"] {
        assert_eq!(code(&submit(&jobs, &bin, &[bad])), 2, "{bad}");
    }
    assert_eq!(
        std::fs::read_to_string(&log).unwrap().lines().count(),
        before
    );
}

#[test]
fn bad_input_is_refused_and_nothing_written() {
    let dir = out_dir("bad");
    let check = demo_check("liblumen_edge.so", "lumen_sigmoid_f16", "sigmoid");
    let with = |extra: &[&str]| {
        let mut c = check.clone();
        c.extend(strings(extra));
        c
    };
    let missing_lib = strings(&[
        "--lib",
        "/nonexistent/libnothing.so",
        "--symbol",
        "f",
        "--function",
        "tanh",
        "--format",
        "f16",
    ]);
    let jobs = dir.join("job");
    let cases: Vec<(u64, Vec<&str>, Vec<String>, &str)> = vec![
        (0, vec![], check.clone(), "--shards must be at least 1"),
        (2, vec!["--parallel", "0"], check.clone(), "--parallel"),
        (2, vec!["--sbatch", "time=30"], check.clone(), "--sbatch"),
        (2, vec!["--name", "a b"], check.clone(), "--name"),
        (2, vec!["--ulpgauge", "ulpgauge"], check.clone(), "absolute"),
        (2, vec![], with(&["--shard", "1/2"]), "leave out --shard"),
        (2, vec![], with(&["--json", "x.json"]), "leave out --json"),
        (2, vec![], with(&["--plot", "x.svg"]), "leave out --plot"),
        (2, vec![], with(&["--range", "1,0"]), "range"),
        (2, vec![], with(&["--no-such-flag"]), "check arguments"),
        (2, vec![], missing_lib, "no such file"),
    ];
    for (shards, extra, check, message) in cases {
        let out = generate(&jobs, shards, &extra, &check);
        assert_eq!(code(&out), 2, "{message}: {}", stderr(&out));
        let err = stderr(&out);
        assert!(
            err.starts_with("ulpgauge: ") && err.lines().count() == 1,
            "{err}"
        );
        assert!(err.contains(message), "{message}: {err}");
        assert!(!jobs.exists(), "{message}: wrote {}", jobs.display());
    }
    let unknown = strings(&[
        "--function",
        "nope",
        "--format",
        "f16",
        "--lib",
        "x",
        "--symbol",
        "y",
    ]);
    let out = generate(&jobs, 2, &[], &unknown);
    assert_eq!(code(&out), 2);
    assert!(stderr(&out).contains("unknown function 'nope'"));

    // A folder holding shard reports of an earlier run.
    std::fs::create_dir_all(jobs.join("shards")).unwrap();
    std::fs::write(jobs.join("shards/shard-1-of-2.json"), "{}").unwrap();
    let out = generate(&jobs, 2, &[], &check);
    assert_eq!(code(&out), 2);
    assert!(stderr(&out).contains("earlier run"), "{}", stderr(&out));
    assert!(!jobs.join("shard.sbatch").exists());
    // Slurm cannot take a blank in a #SBATCH path.
    let out = generate(&dir.join("a b"), 2, &[], &check);
    assert_eq!(code(&out), 2);
    assert!(stderr(&out).contains("blanks"), "{}", stderr(&out));
    assert!(!dir.join("a b").exists());
    // No check arguments at all.
    let out = ulpgauge(&strings(&["slurm", "--shards", "2", "--dir", "x"]));
    assert_eq!(code(&out), 2);
}

#[test]
fn submit_flag_runs_submit_sh() {
    let dir = out_dir("submit-flag");
    let check = demo_check("liblumen_edge.so", "lumen_sigmoid_f16", "sigmoid");
    let bin = fake_sbatch(&dir);
    let path = format!("{}:{}", bin.display(), std::env::var("PATH").unwrap());
    let run = |jobs: &Path| {
        let mut args = strings(&["slurm", "--shards", "2", "--submit", "--dir"]);
        args.push(jobs.display().to_string());
        args.push("--".into());
        args.extend(check.iter().cloned());
        Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
            .args(&args)
            .env("PATH", &path)
            .output()
            .unwrap()
    };
    let out = run(&dir.join("ok"));
    assert_eq!(code(&out), 0, "{}", stderr(&out));
    let calls = std::fs::read_to_string(dir.join("sbatch.log")).unwrap();
    assert_eq!(calls.lines().count(), 2, "{calls}");
    assert!(calls.lines().next().unwrap().contains("--array=1-2 "));
    // sbatch refusing the job (a bad partition, say): exit 2, the scripts kept for a retry.
    std::fs::write(
        bin.join("sbatch"),
        "#!/bin/bash\necho 'sbatch: error: invalid partition' >&2\nexit 1\n",
    )
    .unwrap();
    let out = run(&dir.join("refused"));
    assert_eq!(code(&out), 2);
    assert!(
        stderr(&out).contains("submit.sh failed"),
        "{}",
        stderr(&out)
    );
    assert!(dir.join("refused/shard.sbatch").is_file());
}
