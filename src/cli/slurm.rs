//! `ulpgauge slurm --shards N --dir DIR -- CHECK-ARGS…`: writes the scripts that run one check
//! (or manifest) as a Slurm job array, one `check --shard I/N` per array task, and a merge job
//! queued behind the array.
//!
//! Everything is checked before anything is written (exit 2, nothing written). The scripts
//! run the check from the folder `slurm` ran in, so relative paths mean what they meant here.

use super::check::{self, build_config, target_from_args};
use super::Failure;
use crate::kernel::load_manifest;
use crate::report::write_atomic;
use clap::Parser;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};

/// Arguments of `slurm`.
#[derive(clap::Args, Debug, Clone)]
pub struct Args {
    /// How many shards (array tasks) the check is cut into.
    #[arg(long, value_name = "N")]
    pub shards: u64,
    /// Folder for the scripts, the shard reports, the task logs and the merged report.
    #[arg(long, value_name = "DIR")]
    pub dir: PathBuf,
    /// At most K array tasks run at once (Slurm's `--array=…%K`).
    #[arg(long, value_name = "K")]
    pub parallel: Option<u64>,
    /// CPUs each task asks for; the check's thread pool uses exactly these.
    #[arg(long, value_name = "C", default_value_t = 1)]
    pub cpus_per_task: u32,
    /// Job name prefix (`NAME-shards`, `NAME-merge`).
    #[arg(long, value_name = "NAME", default_value = "ulpgauge")]
    pub name: String,
    /// An extra `#SBATCH` option for both jobs, e.g. `--sbatch=--time=30` (repeatable).
    #[arg(long = "sbatch", value_name = "OPTION", allow_hyphen_values = true)]
    pub sbatch: Vec<String>,
    /// The ulpgauge executable as the compute nodes see it (default: this one).
    #[arg(long, value_name = "PATH")]
    pub ulpgauge: Option<PathBuf>,
    /// Submit at once (runs DIR/submit.sh).
    #[arg(long)]
    pub submit: bool,
    /// The check's own arguments, after `--` (no --shard, --json, --csv or --plot).
    #[arg(last = true, required = true, value_name = "CHECK-ARGS")]
    pub check: Vec<String>,
}

/// The check's arguments parsed as `ulpgauge check` would, to refuse bad input here rather
/// than in N failed tasks.
#[derive(Parser, Debug)]
#[command(name = "ulpgauge check", no_binary_name = true)]
struct CheckLine {
    #[command(flatten)]
    args: check::Args,
}

/// Everything the three scripts need.
struct Plan {
    shards: u64,
    dir: PathBuf,
    workdir: PathBuf,
    exe: PathBuf,
    throttle: String,
    cpus: u32,
    name: String,
    extra: Vec<String>,
    check: Vec<String>,
}

/// Runs `slurm`.
pub fn run(args: Args) -> Result<i32, Failure> {
    let plan = plan(&args)?;
    let shard_dir = plan.dir.join("shards");
    std::fs::create_dir_all(&shard_dir)
        .map_err(|e| Failure::bad_input(format!("cannot create {}: {e}", shard_dir.display())))?;
    let scripts = [
        ("shard.sbatch", shard_script(&plan)),
        ("merge.sbatch", merge_script(&plan)),
        ("submit.sh", submit_script(&plan)),
    ];
    for (file, text) in &scripts {
        write_atomic(&plan.dir.join(file), text).map_err(Failure::bad_input)?;
    }
    let dir = plan.dir.display();
    if args.submit {
        sayln!("wrote {dir}/shard.sbatch, merge.sbatch and submit.sh; submitting");
        let status = std::process::Command::new("bash")
            .arg(plan.dir.join("submit.sh"))
            .status()
            .map_err(|e| Failure::bad_input(format!("cannot run bash: {e}")))?;
        if !status.success() {
            return Err(Failure::bad_input(format!(
                "{dir}/submit.sh failed ({status}); the scripts are written, submit again with: bash {dir}/submit.sh"
            )));
        }
    } else {
        sayln!(
            "wrote {dir}/shard.sbatch ({} array tasks), merge.sbatch and submit.sh",
            plan.shards
        );
        sayln!("submit with:  bash {dir}/submit.sh");
        sayln!(
            "merged report: {dir}/merged.json; after a failed task: bash {dir}/submit.sh --missing"
        );
    }
    Ok(0)
}

/// Validates every argument and the check line; nothing is written before this succeeds.
fn plan(args: &Args) -> Result<Plan, Failure> {
    if args.shards == 0 {
        return Err(Failure::bad_input("--shards must be at least 1"));
    }
    if args.parallel == Some(0) {
        return Err(Failure::bad_input("--parallel must be at least 1"));
    }
    if args.cpus_per_task == 0 {
        return Err(Failure::bad_input("--cpus-per-task must be at least 1"));
    }
    if args.name.is_empty()
        || !args
            .name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "-_.".contains(c))
    {
        return Err(Failure::bad_input(format!(
            "--name {:?}: use letters, digits, '-', '_' and '.'",
            args.name
        )));
    }
    for option in &args.sbatch {
        if !option.starts_with('-') || option.contains(['\n', '\r']) {
            return Err(Failure::bad_input(format!(
                "--sbatch {option:?}: expected one sbatch option such as --time=30"
            )));
        }
    }
    validate_check(&args.check)?;
    let workdir = std::env::current_dir()
        .map_err(|e| Failure::bad_input(format!("cannot read the current folder: {e}")))?;
    let dir = workdir.join(&args.dir);
    sbatch_path(&dir, "--dir")?;
    sbatch_path(&workdir, "the current folder")?;
    if dir.exists() && !dir.is_dir() {
        return Err(Failure::bad_input(format!(
            "--dir {}: not a folder",
            dir.display()
        )));
    }
    if let Some(old) = earlier_shard(&dir.join("shards")) {
        return Err(Failure::bad_input(format!(
            "{} holds a shard report of an earlier run ({old}): choose a new --dir or remove it",
            dir.join("shards").display()
        )));
    }
    let exe = match &args.ulpgauge {
        Some(path) if path.is_absolute() => path.clone(),
        Some(path) => {
            return Err(Failure::bad_input(format!(
                "--ulpgauge {}: give the absolute path the compute nodes see",
                path.display()
            )))
        }
        None => std::env::current_exe()
            .and_then(|p| p.canonicalize())
            .map_err(|e| Failure::bad_input(format!("cannot find this executable: {e}")))?,
    };
    Ok(Plan {
        shards: args.shards,
        dir,
        workdir,
        exe,
        throttle: args.parallel.map(|k| format!("%{k}")).unwrap_or_default(),
        cpus: args.cpus_per_task,
        name: args.name.clone(),
        extra: args.sbatch.clone(),
        check: args.check.clone(),
    })
}

/// Refuses what `ulpgauge check` would refuse, without starting a kernel; and the options
/// the scripts set themselves.
fn validate_check(line: &[String]) -> Result<(), Failure> {
    let parsed = CheckLine::try_parse_from(line).map_err(|e| {
        let text = e.to_string();
        let first = text.lines().next().unwrap_or("bad arguments");
        Failure::bad_input(format!(
            "check arguments: {}",
            first.trim_start_matches("error: ")
        ))
    })?;
    let args = parsed.args;
    super::check::signature_from_args(&args)
        .map_err(|f| Failure::bad_input(format!("check arguments: {}", f.message)))?;
    let owned = [
        (args.shard.is_some(), "--shard"),
        (args.json.is_some(), "--json"),
        (args.csv.is_some(), "--csv"),
        (args.csv_points_over.is_some(), "--csv-points-over"),
        (args.plot.is_some(), "--plot"),
    ];
    if let Some((_, flag)) = owned.iter().find(|(given, _)| *given) {
        return Err(Failure::bad_input(format!(
            "check arguments: leave out {flag}: each task writes its shard's JSON and the merge job writes DIR/merged.json"
        )));
    }
    // check's own bounds, so a task never fails on what the submission accepted.
    super::check::runner_options(&args)?;
    if let Some(manifest) = &args.manifest {
        if args.lib.is_some()
            || args.symbol.is_some()
            || args.function.is_some()
            || args.format.is_some()
        {
            return Err(Failure::bad_input(
                "--manifest replaces --lib, --symbol, --function and --format",
            ));
        }
        for spec in load_manifest(manifest).map_err(Failure::bad_input)? {
            let target = check::KernelTarget::of_spec(&spec);
            build_config(&target, &args).map_err(|f| {
                Failure::bad_input(format!(
                    "{}: kernel {}: {}",
                    manifest.display(),
                    spec.symbol,
                    f.message
                ))
            })?;
        }
        return Ok(());
    }
    let target = target_from_args(&args)?;
    build_config(&target, &args)?;
    if args.builtin_kernel.is_some() {
        return Ok(());
    }
    let library = args
        .lib
        .as_ref()
        .ok_or_else(|| Failure::bad_input("--lib is required (or use --manifest)"))?;
    if args.symbol.is_none() {
        return Err(Failure::bad_input("--symbol is required with --lib"));
    }
    if !library.is_file() {
        return Err(Failure::bad_input(format!(
            "--lib {}: no such file",
            library.display()
        )));
    }
    Ok(())
}

/// `#SBATCH` lines are split at blanks and `--output` expands `%`: such paths cannot be given.
fn sbatch_path(path: &Path, what: &str) -> Result<(), Failure> {
    let text = path
        .to_str()
        .ok_or_else(|| Failure::bad_input(format!("{what} {}: not UTF-8", path.display())))?;
    if text.contains(|c: char| c.is_whitespace() || "%\"'\\".contains(c)) {
        return Err(Failure::bad_input(format!(
            "{what} {text}: Slurm's #SBATCH lines cannot hold a path with blanks, quotes or '%'"
        )));
    }
    Ok(())
}

/// A shard report already in the folder, if any.
fn earlier_shard(shards: &Path) -> Option<String> {
    std::fs::read_dir(shards)
        .ok()?
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .find(|n| n.starts_with("shard-") && n.ends_with(".json"))
}

/// One word for bash, single-quoted unless it is plainly safe.
fn quote(word: &str) -> String {
    let plain = !word.is_empty()
        && word
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "-_./=:,+@%".contains(c));
    if plain {
        word.to_string()
    } else {
        format!("'{}'", word.replace('\'', r"'\''"))
    }
}

fn quote_path(path: &Path) -> String {
    quote(&path.to_string_lossy())
}

/// The `#SBATCH` lines both jobs share.
fn common_header(plan: &Plan, out: &mut String) {
    let _ = writeln!(out, "#SBATCH --ntasks=1");
    let _ = writeln!(out, "#SBATCH --chdir={}", plan.workdir.display());
    for option in &plan.extra {
        let _ = writeln!(out, "#SBATCH {option}");
    }
}

/// The array job: task I measures shard I/N.
fn shard_script(plan: &Plan) -> String {
    let n = plan.shards;
    let mut s = String::from("#!/bin/bash\n");
    s += "# One task of this Slurm job array measures one shard of the check below (written by\n";
    s += "# `ulpgauge slurm`). Task I always measures shard I/N, N fixed here rather than read from\n";
    s += "# SLURM_ARRAY_TASK_COUNT (a resubmission of a few tasks has a smaller count), so a requeued\n";
    s += "# or resubmitted task repeats exactly its shard. Submit with submit.sh beside this file.\n";
    let _ = writeln!(s, "#SBATCH --job-name={}-shards", plan.name);
    let _ = writeln!(s, "#SBATCH --array=1-{n}{}", plan.throttle);
    let _ = writeln!(s, "#SBATCH --cpus-per-task={}", plan.cpus);
    let _ = writeln!(s, "#SBATCH --output={}/slurm-%A_%a.out", plan.dir.display());
    s += "#SBATCH --open-mode=append\n#SBATCH --requeue\n";
    common_header(plan, &mut s);
    let _ = writeln!(s, "set -u\nshards={n}\ndir={}", quote_path(&plan.dir));
    s += r#"task="${SLURM_ARRAY_TASK_ID:-}"
if ! [[ "$task" =~ ^[0-9]+$ ]] || (( 10#$task < 1 || 10#$task > shards )); then
  echo "ulpgauge: array task '$task' is not one of 1..$shards: submit with $dir/submit.sh" >&2
  exit 2
fi
task=$((10#$task))
report="$dir/shards/shard-$task-of-$shards.json"
echo "shard $task/$shards: job ${SLURM_JOB_ID:-?} (array ${SLURM_ARRAY_JOB_ID:-?} task $task), attempt $(( ${SLURM_RESTART_COUNT:-0} + 1 )), $(hostname), $(date -u +%Y-%m-%dT%H:%M:%SZ)"
# A report left by an earlier attempt must not stand in for this one.
rm -f -- "$report"
"#;
    let _ = writeln!(
        s,
        "export RAYON_NUM_THREADS=\"${{SLURM_CPUS_PER_TASK:-{}}}\"",
        plan.cpus
    );
    let words: Vec<String> = plan.check.iter().map(|w| quote(w)).collect();
    let progress = if plan.check.iter().any(|w| w == "--no-progress") {
        ""
    } else {
        " --no-progress"
    };
    s += "# The time line is the cost model's input: shards x time per shard.\n";
    s += "TIMEFORMAT=\"shard $task/$shards: check took %R s wall, %U s user, %S s system\"\n";
    let _ = writeln!(
        s,
        "time {} check {} --shard \"$task/$shards\" --json \"$report\"{progress}",
        quote_path(&plan.exe),
        words.join(" ")
    );
    s += r#"status=$?
# A written report is a measured shard whatever its verdict (1: a finding, 3: the kernel
# crashed): the merged report carries the verdict, so the task succeeds and the merge runs.
if [ -f "$report" ]; then
  echo "shard $task/$shards: wrote $report (check exit status $status)"
  exit 0
fi
echo "shard $task/$shards: no report written (check exit status $status)" >&2
exit $(( status == 0 ? 1 : status ))
"#;
    s
}

/// The merge job: joins whatever shard reports exist; `merge` names any missing shard.
fn merge_script(plan: &Plan) -> String {
    let mut s = String::from("#!/bin/bash\n");
    s += "# Joins the shard reports into DIR/merged.json (written by `ulpgauge slurm`; submit.sh\n";
    s += "# queues it behind the array). Its exit status is the merged check's (0, 1, 3), or 2\n";
    s += "# when shards are missing: merge names them.\n";
    let _ = writeln!(s, "#SBATCH --job-name={}-merge", plan.name);
    s += "#SBATCH --cpus-per-task=1\n";
    let _ = writeln!(s, "#SBATCH --output={}/merge-%j.out", plan.dir.display());
    common_header(plan, &mut s);
    let _ = writeln!(
        s,
        "set -u\nshards={}\ndir={}",
        plan.shards,
        quote_path(&plan.dir)
    );
    s += r#"shopt -s nullglob
reports=("$dir"/shards/shard-*-of-"$shards".json)
rm -f -- "$dir/merged.json"
if [ ${#reports[@]} -eq 0 ]; then
  echo "ulpgauge: no shard report in $dir/shards: all $shards shards are missing" >&2
  echo "resubmit them with: bash $dir/submit.sh --missing" >&2
  exit 2
fi
"#;
    let _ = writeln!(
        s,
        "{} merge \"${{reports[@]}}\" --json \"$dir/merged.json\"",
        quote_path(&plan.exe)
    );
    s += r#"status=$?
if [ $status -eq 2 ]; then
  echo "no merged report; if shards are missing, resubmit them with: bash $dir/submit.sh --missing" >&2
fi
exit $status
"#;
    s
}

/// Submits the array (all tasks, the missing ones, or those named) and the merge behind it.
fn submit_script(plan: &Plan) -> String {
    let mut s = String::from("#!/bin/bash\n");
    s += "# Submits the shard array, then the merge job, which starts once every task succeeded\n";
    s += "# and is cancelled by Slurm if one fails (written by `ulpgauge slurm`).\n";
    s += "#   bash submit.sh              every shard\n";
    s += "#   bash submit.sh --missing    the shards without a report (after a failed task)\n";
    s += "#   bash submit.sh I [I ...]    these shards\n";
    s += "# Each submission appends \"ARRAY_JOB MERGE_JOB TASKS\" to jobs.txt.\n";
    s += "set -euo pipefail\n";
    let _ = writeln!(
        s,
        "shards={}\nthrottle={}\ndir={}",
        plan.shards,
        quote(&plan.throttle),
        quote_path(&plan.dir)
    );
    s += r#"tasks=""
if [ $# -eq 0 ]; then
  tasks="1-$shards"
elif [ "$1" = --missing ] && [ $# -eq 1 ]; then
  for ((i = 1; i <= shards; i++)); do
    [ -f "$dir/shards/shard-$i-of-$shards.json" ] || tasks+="${tasks:+,}$i"
  done
else
  for i in "$@"; do
    if ! [[ "$i" =~ ^[0-9]+$ ]] || (( 10#$i < 1 || 10#$i > shards )); then
      echo "submit.sh: '$i' is not a shard of 1..$shards (or give --missing)" >&2
      exit 2
    fi
    tasks+="${tasks:+,}$((10#$i))"
  done
fi
after=()
array=-
if [ -n "$tasks" ]; then
  array="$(sbatch --parsable --array="$tasks$throttle" "$dir/shard.sbatch")"
  array="${array%%;*}"
  after=(--dependency="afterok:$array" --kill-on-invalid-dep=yes)
  echo "shard array: job $array, tasks $tasks of 1-$shards, logs $dir/slurm-${array}_<task>.out"
else
  echo "every shard report is present: submitting the merge only"
fi
merge="$(sbatch --parsable "${after[@]}" "$dir/merge.sbatch")"
merge="${merge%%;*}"
echo "merge: job $merge, log $dir/merge-$merge.out, report $dir/merged.json"
echo "$array $merge ${tasks:--}" >>"$dir/jobs.txt"
"#;
    s
}
