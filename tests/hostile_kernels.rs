//! Kernels that misbehave on purpose (tests/hostile/lumen_hostile.c): every fault is
//! contained, named and bounded, no other kernel's result is lost, and no process outlives
//! ulpgauge.  Wall times of each case: benches/hostile_kernels.sh.

mod kernel_support;

use kernel_support::{f32_sample, spec};
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::OnceLock;
use std::time::{Duration, Instant};
use ulpgauge::kernel::{CallError, Runner, RunnerOptions};

/// Compiles lumen_hostile.c once per test binary; returns the library.
fn hostile() -> &'static Path {
    static LIB: OnceLock<PathBuf> = OnceLock::new();
    LIB.get_or_init(|| {
        std::env::set_var("ULPGAUGE_WORKER_EXE", env!("CARGO_BIN_EXE_ulpgauge"));
        let dir =
            Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("hostile-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let lib = dir.join("liblumen_hostile.so");
        let root = Path::new(env!("CARGO_MANIFEST_DIR"));
        let src = root.join("tests/hostile/lumen_hostile.c");
        let ok = Command::new(std::env::var("CC").unwrap_or("cc".into()))
            .args(["-O1", "-std=c11", "-fPIC", "-shared", "-fvisibility=hidden"])
            .arg(format!(
                "-I{}",
                root.join("kernels-under-test/src").display()
            ))
            .arg("-o")
            .arg(&lib)
            .arg(&src)
            .arg("-lm")
            .status()
            .expect("run the C compiler")
            .success();
        assert!(ok, "compiling {}", src.display());
        lib
    })
}

/// A copy of the hostile library in a folder of its own: its path marks every process that
/// runs it (the worker's command line names the library, and forks inherit it).
fn private_copy(name: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join(format!("hostile-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let lib = dir.join("liblumen_hostile.so");
    std::fs::copy(hostile(), &lib).unwrap();
    lib
}

/// A runner on one hostile kernel (f32 sigmoid).
fn hostile_runner(symbol: &str, options: RunnerOptions) -> Runner {
    let mut s = spec("liblumen_edge.so", symbol, "sigmoid", "f32");
    s.library = hostile().to_path_buf();
    Runner::start(&s, options).unwrap_or_else(|e| panic!("start {symbol}: {e}"))
}

fn ulpgauge(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(args)
        .output()
        .expect("run ulpgauge");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// `check` of one hostile kernel on a small random sweep; the JSON report when one was written.
fn check(lib: &Path, symbol: &str, extra: &[&str]) -> (i32, String, Option<Value>) {
    let json = lib.with_file_name(format!("{symbol}.json"));
    let _ = std::fs::remove_file(&json);
    let mut args = vec![
        "check",
        "--lib",
        lib.to_str().unwrap(),
        "--symbol",
        symbol,
        "--function",
        "sigmoid",
        "--format",
        "f32",
        "--sweep",
        "random",
        "--points",
        "2000",
        "--quiet",
        "--no-progress",
        "--json",
        json.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    let (code, _, stderr) = ulpgauge(&args);
    let report = std::fs::read_to_string(&json)
        .ok()
        .map(|t| serde_json::from_str(&t).expect("a JSON report"));
    (code, stderr, report)
}

/// Live (not zombie) processes whose command line mentions `marker`.
fn running_with(marker: &Path) -> Vec<i32> {
    let needle = marker.to_str().unwrap().as_bytes();
    let mut found = Vec::new();
    for entry in std::fs::read_dir("/proc").unwrap().flatten() {
        let Some(pid) = entry
            .file_name()
            .to_str()
            .and_then(|n| n.parse::<i32>().ok())
        else {
            continue;
        };
        let Ok(cmdline) = std::fs::read(entry.path().join("cmdline")) else {
            continue;
        };
        let zombie = std::fs::read_to_string(entry.path().join("stat"))
            .ok()
            .and_then(|s| {
                s.rfind(')')
                    .map(|i| s[i + 1..].trim_start().starts_with('Z'))
            })
            .unwrap_or(true);
        if !zombie && cmdline.windows(needle.len()).any(|w| w == needle) {
            found.push(pid);
        }
    }
    found
}

/// Waits (bounded) until no process mentions `marker`; the ones left, if any.  Killed processes
/// take a moment to go, so this waits for an event rather than timing anything.
fn left_behind(marker: &Path) -> Vec<i32> {
    let deadline = Instant::now() + Duration::from_secs(10);
    loop {
        let left = running_with(marker);
        if left.is_empty() || Instant::now() > deadline {
            for &pid in &left {
                // Do not leave them to the next test either.
                // SAFETY: kill on a pid we found; at worst it is gone already.
                unsafe { libc::kill(pid, libc::SIGKILL) };
            }
            return left;
        }
        std::thread::sleep(Duration::from_millis(50));
    }
}

#[test]
fn data_symbols_are_refused_before_any_worker_runs() {
    // STT_OBJECT symbols (System V gABI, "Symbol Table"): a table in .rodata and state in .bss.
    for (symbol, what) in [
        ("lumen_sigmoid_f32_lut", "a data object"),
        ("lumen_sigmoid_f32_scratch_state", "a data object"),
    ] {
        let lib = private_copy(symbol);
        let (code, stderr, report) = check(&lib, symbol, &[]);
        assert_eq!(code, 2, "{symbol}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "{stderr}");
        assert!(
            stderr.contains(&format!("symbol '{symbol}' is {what}, not a function")),
            "{stderr}"
        );
        assert!(report.is_none(), "nothing is written on bad input");
        assert!(running_with(&lib).is_empty(), "no worker was started");
    }
}

#[test]
fn a_kernel_that_fails_on_every_call_ends_with_exit_3_and_a_report() {
    let lib = private_copy("uncalibrated");
    let (code, stderr, report) = check(&lib, "lumen_sigmoid_f32_uncalibrated", &[]);
    assert_eq!(code, 3, "{stderr}");
    let report = report.expect("a report");
    let signal = report["crash"]["signal"].as_str().unwrap();
    assert!(signal.starts_with("SIGABRT on every call"), "{signal}");
    assert_eq!(report["verdict"]["exit_code"], 3);
    let hygiene = report["hygiene"].as_array().unwrap();
    assert_eq!(hygiene.len(), 6);
    assert!(hygiene.iter().all(
        |h| h["passed"] == false && h["detail"].as_str().unwrap().starts_with("could not run")
    ));
    assert_eq!(report["accuracy"]["points"], 0);
    assert!(left_behind(&lib).is_empty());

    // The runner gives up after a handful of workers, not one per input.
    let mut r = hostile_runner("lumen_sigmoid_f32_uncalibrated", kernel_support::options());
    let x = f32_sample(20_000);
    let out = r.run(&x, None);
    assert!(out.outputs.iter().all(|o| o.is_none()));
    assert_eq!(out.crashes.len(), 1, "{:?}", out.crashes);
    assert!(r.stopped().is_some());
    assert!(r.workers_started <= 16, "{} workers", r.workers_started);
    // Later calls cost nothing.
    let before = r.workers_started;
    let again = r.run(&x, None);
    assert!(again.crashes.is_empty() && again.outputs.iter().all(|o| o.is_none()));
    assert_eq!(r.workers_started, before);
    assert!(r.ns_per_element(&x[..64], None).is_none());
}

#[test]
fn a_kernel_that_hangs_on_every_call_is_given_up_after_a_few_timeouts() {
    let mut r = hostile_runner(
        "lumen_sigmoid_f32_dma_wait",
        RunnerOptions {
            batch_timeout: Duration::from_millis(300),
            batch_size: 4096,
            ..RunnerOptions::default()
        },
    );
    let out = r.run(&f32_sample(10_000), None);
    assert_eq!(out.crashes.len(), 1, "{:?}", out.crashes);
    assert!(
        out.crashes[0].signal.starts_with("hang on every call"),
        "{}",
        out.crashes[0].signal
    );
    // One hang raises the question, two single inputs (one of each sign) answer it: three
    // timeouts in all.
    assert!(r.workers_started <= 4, "{} workers", r.workers_started);
}

#[test]
fn the_restart_and_time_budgets_end_a_kernel_that_keeps_failing() {
    // Every other input negative: each one crashes the kernel and costs a worker.
    let x: Vec<u32> = (0..400u32)
        .map(|i| (1.0f32 + i as f32 / 8.0).to_bits() | ((i & 1) << 31))
        .collect();
    let mut r = hostile_runner(
        "lumen_sigmoid_f32_negative_crash",
        RunnerOptions {
            max_restarts: 40,
            batch_size: 64,
            ..kernel_support::options()
        },
    );
    let out = r.run(&x, None);
    let last = out.crashes.last().unwrap();
    assert!(
        last.signal.contains("gave up after 41 failed calls"),
        "{}",
        last.signal
    );
    assert!(out.crashes.len() <= 41);
    assert!(r.workers_started <= 42, "{} workers", r.workers_started);
    // Inputs before the first crash were measured, every input after the stop was not.
    assert!(out.outputs[0].is_some());
    assert!(out.outputs[last.index..].iter().all(|o| o.is_none()));
    for c in &out.crashes[..out.crashes.len() - 1] {
        assert_eq!(c.signal, "SIGSEGV");
        assert!(f32::from_bits(c.input) < 0.0);
    }

    // Only negative inputs: every call of the run fails, yet the kernel is not one that fails
    // on every call (the sign-flipped probe returns), so each crash is pinned until the budget.
    let negatives: Vec<u32> = x.iter().map(|b| b | 0x8000_0000).collect();
    let mut r = hostile_runner(
        "lumen_sigmoid_f32_negative_crash",
        RunnerOptions {
            max_restarts: 30,
            ..kernel_support::options()
        },
    );
    let out = r.run(&negatives, None);
    assert!(out.crashes.len() > 5, "{:?}", out.crashes);
    assert!(out.crashes.iter().all(|c| !c.signal.contains("every call")));
    assert!(out
        .crashes
        .last()
        .unwrap()
        .signal
        .contains("--max-restarts 30"));

    let mut r = hostile_runner(
        "lumen_sigmoid_f32_dma_wait",
        RunnerOptions {
            batch_timeout: Duration::from_millis(200),
            max_fault_time: Duration::from_millis(300),
            ..kernel_support::options()
        },
    );
    let out = r.run(&x, None);
    assert!(
        out.crashes[0].signal.contains("--max-fault-time"),
        "{:?}",
        out.crashes
    );
}

#[test]
fn forged_replies_are_a_kernel_fault_pinned_to_their_input() {
    let mut x: Vec<u32> = (1..=64u32).map(|i| (i as f32 / 16.0).to_bits()).collect();
    x.retain(|&b| b != 2.0f32.to_bits());
    x.insert(21, 2.0f32.to_bits());
    let mut r = hostile_runner("lumen_sigmoid_f32_forger_at_two", kernel_support::options());
    let out = r.run(&x, None);
    assert_eq!(out.crashes.len(), 1, "{:?}", out.crashes);
    let c = &out.crashes[0];
    assert_eq!((c.index, c.input), (21, 2.0f32.to_bits()));
    assert!(
        c.signal
            .starts_with("channel: the kernel wrote into the worker's channel"),
        "{}",
        c.signal
    );
    assert_eq!(out.outputs.iter().filter(|o| o.is_some()).count(), 63);

    // Forging on every call: exit 3 with a report, not an abort of the main process.
    let lib = private_copy("forger");
    let (code, stderr, report) = check(&lib, "lumen_sigmoid_f32_forger", &[]);
    assert_eq!(code, 3, "{stderr}");
    let signal = report.expect("a report")["crash"]["signal"]
        .as_str()
        .unwrap()
        .to_string();
    assert!(
        signal.starts_with("channel:") && signal.contains("on every call"),
        "{signal}"
    );
}

#[test]
fn a_kernel_reading_standard_input_does_not_disturb_the_worker() {
    let mut r = hostile_runner("lumen_sigmoid_f32_console_hook", kernel_support::options());
    let x = f32_sample(5000);
    let out = r.run(&x, None);
    assert!(out.crashes.is_empty(), "{:?}", out.crashes);
    // sigmoid(0) = 1/2 exactly, sigmoid(1) = 0.7310585786… (value from memory; the kernel's
    // expf need not be correctly rounded, so only within a few ulps).
    assert_eq!(out.outputs[0], Some(0.5f32.to_bits()));
    let one = x.iter().position(|&b| b == 1.0f32.to_bits()).unwrap();
    let y = f32::from_bits(out.outputs[one].unwrap());
    assert!((y - 0.731_058_6).abs() < 1e-6, "{y}");
}

#[test]
fn a_manifest_keeps_the_other_kernels_results() {
    let built = kernel_support::kernels();
    let dir = private_copy("manifest");
    let manifest = dir.with_file_name("lumen-mixed.toml");
    std::fs::write(
        &manifest,
        format!(
            "[[kernel]]\nlibrary = \"{}\"\nsymbol = \"lumen_sigmoid_f32\"\nfunction = \"sigmoid\"\nformat = \"f32\"\n\n\
             [[kernel]]\nlibrary = \"{}\"\nsymbol = \"lumen_sigmoid_f32_uncalibrated\"\nfunction = \"sigmoid\"\nformat = \"f32\"\n",
            built.join("liblumen_edge.so").display(),
            dir.display()
        ),
    )
    .unwrap();
    let json = dir.with_file_name("mixed.json");
    let (code, _, stderr) = ulpgauge(&[
        "check",
        "--manifest",
        manifest.to_str().unwrap(),
        "--sweep",
        "random",
        "--points",
        "2000",
        "--quiet",
        "--no-progress",
        "--json",
        json.to_str().unwrap(),
    ]);
    assert_eq!(code, 3, "{stderr}");
    let v: Value = serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let kernels = v["kernels"].as_array().unwrap();
    assert_eq!(kernels.len(), 2);
    assert_eq!(kernels[0]["crash"], Value::Null);
    assert!(kernels[0]["accuracy"]["points"].as_u64().unwrap() > 1000);
    assert!(kernels[1]["crash"]["signal"]
        .as_str()
        .unwrap()
        .contains("on every call"));
}

#[test]
fn no_process_a_kernel_forks_outlives_ulpgauge() {
    for symbol in ["lumen_sigmoid_f32_telemetry", "lumen_sigmoid_f32_daemon"] {
        let lib = private_copy(symbol);
        let (code, stderr, _) = check(&lib, symbol, &[]);
        assert!(code == 0 || code == 1, "{symbol}: {stderr}");
        assert_eq!(left_behind(&lib), Vec::<i32>::new(), "{symbol}");
    }
}

#[test]
fn signalling_only_ulpgauge_ends_a_worker_stuck_in_the_kernel() {
    for (name, signal) in [("sigterm", libc::SIGTERM), ("sigkill", libc::SIGKILL)] {
        let lib = private_copy(name);
        let mut child = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
            .args(["check", "--lib"])
            .arg(&lib)
            .args([
                "--symbol",
                "lumen_sigmoid_f32_stuck",
                "--function",
                "sigmoid",
                "--format",
                "f32",
                "--timeout",
                "600",
                "--quiet",
                "--no-progress",
            ])
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        // The worker and the helper it forked, besides ulpgauge itself.
        let deadline = Instant::now() + Duration::from_secs(60);
        while running_with(&lib).len() < 3 && Instant::now() < deadline {
            std::thread::sleep(Duration::from_millis(20));
        }
        assert_eq!(
            running_with(&lib).len(),
            3,
            "{name}: the kernel did not start"
        );
        // SAFETY: signals the ulpgauge process this test started.
        unsafe { libc::kill(child.id() as i32, signal) };
        let status = child.wait().unwrap();
        use std::os::unix::process::ExitStatusExt;
        assert_eq!(status.signal(), Some(signal), "{name}");
        assert_eq!(left_behind(&lib), Vec::<i32>::new(), "{name}");
    }
}

/// Largest VmPeak (bytes) of the processes mentioning `marker`, sampled every few milliseconds
/// until `done`.
fn watch_peak(marker: PathBuf, done: std::sync::Arc<std::sync::atomic::AtomicBool>) -> u64 {
    let mut peak = 0;
    while !done.load(std::sync::atomic::Ordering::SeqCst) {
        for pid in running_with(&marker) {
            let status = std::fs::read_to_string(format!("/proc/{pid}/status")).unwrap_or_default();
            // proc(5): "VmPeak: Peak virtual memory size", in kB.
            if let Some(kb) = status
                .lines()
                .find_map(|l| l.strip_prefix("VmPeak:"))
                .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<u64>().ok())
            {
                peak = peak.max(kb * 1024);
            }
        }
        std::thread::sleep(Duration::from_millis(2));
    }
    peak
}

#[test]
fn a_kernel_that_wants_20_gib_is_named_out_of_memory_and_held_to_the_limit() {
    for symbol in [
        "lumen_sigmoid_f32_model_cache",
        "lumen_sigmoid_f32_model_slab",
    ] {
        let lib = private_copy(symbol);
        let done = std::sync::Arc::new(std::sync::atomic::AtomicBool::new(false));
        let watcher = {
            let (lib, done) = (lib.clone(), done.clone());
            std::thread::spawn(move || watch_peak(lib, done))
        };
        let (code, stderr, report) = check(&lib, symbol, &["--kernel-memory", "2G"]);
        done.store(true, std::sync::atomic::Ordering::SeqCst);
        let peak = watcher.join().unwrap();
        assert_eq!(code, 3, "{symbol}: {stderr}");
        let report = report.expect("a report");
        let signal = report["crash"]["signal"].as_str().unwrap();
        assert!(
            signal.starts_with(
                "out of memory: the kernel ran out of its 2 GiB address space (--kernel-memory; SIGSEGV)"
            ),
            "{symbol}: {signal}"
        );
        assert!(signal.contains("on every call"), "{signal}");
        assert!(peak <= 2 << 30, "{symbol}: a worker reached {peak} bytes");
        assert!(left_behind(&lib).is_empty(), "{symbol}");
    }
    // The bound is checked before any work: one line, exit 2.
    let lib = private_copy("memory-bounds");
    for bad in ["512M", "lots", "1e300G", "0", "300T"] {
        let (code, stderr, report) = check(
            &lib,
            "lumen_sigmoid_f32_model_cache",
            &["--kernel-memory", bad],
        );
        assert_eq!(code, 2, "{bad}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "{stderr}");
        assert!(stderr.contains("--kernel-memory must be"), "{stderr}");
        assert!(report.is_none());
    }
    assert!(running_with(&lib).is_empty(), "no worker was started");
}

#[test]
fn a_correct_kernel_at_1_ms_per_element_passes_every_hygiene_check() {
    let mut r = hostile_runner("lumen_sigmoid_f32_paced", kernel_support::options());
    let x = f32_sample(3000);
    let out = r.run(&x, None);
    assert!(out.crashes.is_empty(), "{:?}", out.crashes);
    assert!(out.outputs.iter().all(|o| o.is_some()));
    // nanosleep(2) sleeps at least 1 ms per element.
    let pace = r.pace().expect("a measured pace");
    assert!(pace >= 0.9e-3, "{pace}");
    // The sample check uses (HYGIENE_SAMPLE in src/check/mod.rs).
    let checks = ulpgauge::kernel::hygiene::run_checks(&mut r, &x[..1024], None);
    assert_eq!(checks.len(), 6);
    for c in &checks {
        assert!(c.passed, "{}: {}", c.check, c.detail);
    }
    assert_eq!(r.workers_started, 1, "no call was taken for a hang");
}

#[test]
fn a_kernel_that_stops_on_one_input_is_pinned_at_the_default_timeout() {
    let lib = private_copy("stall");
    let (code, stderr, report) = check(
        &lib,
        "lumen_sigmoid_f32_stall_at_one",
        &["--sweep", "dense"],
    );
    assert_eq!(code, 3, "{stderr}");
    let crash = &report.expect("a report")["crash"];
    assert_eq!(crash["signal"], "hang");
    assert_eq!(crash["input"]["bits"], "0x3f800000");
    assert!(left_behind(&lib).is_empty());
}

#[test]
fn a_crash_that_depends_on_call_history_names_the_batch() {
    let x = f32_sample(2000);
    let mut r = hostile_runner(
        "lumen_sigmoid_f32_third_call",
        RunnerOptions {
            batch_size: 64,
            ..kernel_support::options()
        },
    );
    let out = r.run(&x, None);
    assert!(!out.crashes.is_empty());
    for c in &out.crashes {
        assert!(
            c.signal
                .starts_with("SIGABRT depends on call history: it came in the batch of ")
                || c.signal.contains("gave up"),
            "{}",
            c.signal
        );
        // The record names the batch by its first input.
        assert_eq!(x[c.index], c.input);
    }
    // No input is to blame, so every output was had from a fresh worker.
    assert!(out.outputs.iter().all(|o| o.is_some()));

    let lib = private_copy("third-call");
    let (code, stderr, report) = check(
        &lib,
        "lumen_sigmoid_f32_third_call",
        &["--max-restarts", "50"],
    );
    assert_eq!(code, 3, "{stderr}");
    let signal = report.expect("a report")["crash"]["signal"]
        .as_str()
        .unwrap()
        .to_string();
    assert!(
        signal.contains("depends on call history") && signal.contains(" to 0x"),
        "{signal}"
    );
    assert!(left_behind(&lib).is_empty());
}

#[test]
fn a_faulting_address_is_reported_only_for_a_real_fault() {
    let x: Vec<u32> = [1.0f32, 2.0].iter().map(|v| v.to_bits()).collect();
    let request = ulpgauge::kernel::protocol::CallRequest {
        layout: ulpgauge::kernel::protocol::Layout::Padded,
        x_offset: 0,
        y_offset: 0,
        threads: 1,
        reps: 1,
        first: x.clone(),
        second: None,
        strides: (1, 1),
    };
    // raise(3) sends the signal (si_code SI_TKILL, signal(7)); a load from an unmapped page
    // faults (SEGV_MAPERR) with si_addr the address loaded.
    for (symbol, faulted, addr) in [
        ("lumen_sigmoid_f32_self_signal", false, 0),
        ("lumen_sigmoid_f32_wild_pointer", true, 0xdead000),
    ] {
        let mut r = hostile_runner(symbol, kernel_support::options());
        match r.call(&request) {
            Err(CallError::Crashed {
                signal,
                fault: Some(f),
            }) => {
                assert_eq!(signal, "SIGSEGV", "{symbol}");
                assert_eq!((f.faulted, f.addr), (faulted, addr), "{symbol}");
                assert!(!f.out_of_memory);
            }
            other => panic!("{symbol}: {other:?}"),
        }
        let out = r.run(&x, None);
        assert_eq!(out.crashes.len(), 1);
        assert_eq!(
            (out.crashes[0].index, out.crashes[0].signal.as_str()),
            (1, "SIGSEGV")
        );
    }
}

#[test]
fn stop_on_crash_stops_every_later_phase() {
    let lib = private_copy("stop-on-crash");
    let (code, stderr, report) = check(
        &lib,
        "lumen_sigmoid_f32_wild_pointer",
        &["--sweep", "dense", "--stop-on-crash"],
    );
    assert_eq!(code, 3, "{stderr}");
    let report = report.expect("a report");
    assert_eq!(report["crash"]["count"], 1);
    assert_eq!(report["crash"]["input"]["bits"], "0x40000000");
    for h in report["hygiene"].as_array().unwrap() {
        let detail = h["detail"].as_str().unwrap();
        assert!(
            h["passed"] == false && detail.contains("(--stop-on-crash)"),
            "{detail}"
        );
    }
    // Without it, the pinned input is left out and everything else runs.
    let (code, _, report) = check(
        &lib,
        "lumen_sigmoid_f32_wild_pointer",
        &["--sweep", "dense"],
    );
    assert_eq!(code, 3);
    let report = report.unwrap();
    assert!(report["hygiene"]
        .as_array()
        .unwrap()
        .iter()
        .all(|h| h["passed"] == true));
    assert!(left_behind(&lib).is_empty());
}

#[test]
fn a_kernel_that_closes_stdout_and_floods_stderr_changes_nothing() {
    let lib = private_copy("chatty");
    let (code, stderr, report) = check(&lib, "lumen_sigmoid_f32_chatty", &[]);
    assert!(code == 0 || code == 1, "{stderr}");
    let report = report.expect("a report");
    assert_eq!(report["crash"], Value::Null);
    assert!(report["hygiene"]
        .as_array()
        .unwrap()
        .iter()
        .all(|h| h["passed"] == true));
    assert!(left_behind(&lib).is_empty());
}
