//! The main-process side: starts worker processes, sends batches, survives crashes and hangs,
//! and bisects a failing batch down to the input that triggers the failure.

use super::abi::Abi;
use super::protocol::{
    self, decode_fault, decode_reply, encode_call, CallReply, CallRequest, Fault, Layout, Reader,
    Writer, OP_BENCH, OP_QUIT, TAG_ERROR, TAG_FAULT, TAG_OK,
};
use super::{loader, KernelSpec};
use std::io::{self, Read};
use std::os::fd::AsRawFd;
use std::os::unix::process::ExitStatusExt;
use std::path::PathBuf;
use std::process::{Child, ChildStdin, ChildStdout, Command, Stdio};
use std::time::{Duration, Instant};

/// How the runner calls the kernel.
#[derive(Clone, Debug)]
pub struct RunnerOptions {
    /// Longest a single call may take before the worker counts as hung.
    pub batch_timeout: Duration,
    /// Stop at the first crash or hang instead of carrying on with the remaining inputs.
    pub stop_on_crash: bool,
    /// Elements per call.
    pub batch_size: usize,
}

impl Default for RunnerOptions {
    fn default() -> Self {
        RunnerOptions {
            batch_timeout: Duration::from_secs(5),
            stop_on_crash: false,
            batch_size: 65_536,
        }
    }
}

/// Results of [`Runner::run`].
#[derive(Clone, Debug, Default)]
pub struct RunOutcome {
    /// Output bits per input; `None` where the kernel crashed or hung on that input.
    pub outputs: Vec<Option<u32>>,
    /// Each input that crashed or hung the kernel, in input order.
    pub crashes: Vec<CrashRecord>,
}

/// One input the kernel crashed or hung on.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CrashRecord {
    /// The input's bits (x, or y for from-output gradient kernels).
    pub input: u32,
    /// Its index in the inputs given to [`Runner::run`].
    pub index: usize,
    /// "SIGSEGV", "SIGABRT", …, or "hang".
    pub signal: String,
}

/// Why a call did not return results.
#[derive(Clone, Debug)]
pub enum CallError {
    /// The worker died from a signal (or exited), with the handler's fault record if it sent one.
    Crashed {
        /// "SIGSEGV", … or "exit N".
        signal: String,
        /// Fault address and context.
        fault: Option<Fault>,
    },
    /// No reply within the batch timeout.
    Hang,
    /// The worker could not be started or spoke nonsense.
    Worker(String),
}

impl CallError {
    /// "SIGSEGV", "hang", or "worker error: …".
    pub fn label(&self) -> String {
        match self {
            CallError::Crashed { signal, .. } => signal.clone(),
            CallError::Hang => "hang".to_string(),
            CallError::Worker(m) => format!("worker error: {m}"),
        }
    }
}

struct Worker {
    child: Child,
    to: ChildStdin,
    from: ChildStdout,
}

/// Runs one kernel in a worker process.
pub struct Runner {
    spec: KernelSpec,
    options: RunnerOptions,
    abi: Abi,
    exe: PathBuf,
    worker: Option<Worker>,
    /// FP control word before and after loading the library (first worker), if readable.
    pub(crate) load_env: Option<(u32, u32)>,
    /// First call after which the FP control word differed from before it: (n, before, after).
    pub(crate) call_env_change: Option<(usize, u32, u32)>,
    /// Workers started so far.
    pub workers_started: usize,
}

/// The executable to run as the worker: `$ULPGAUGE_WORKER_EXE`, else this executable when it is
/// ulpgauge, else an `ulpgauge` next to it or one directory up (where cargo puts the binary
/// relative to test executables).
pub fn worker_executable() -> Result<PathBuf, String> {
    if let Some(p) = std::env::var_os("ULPGAUGE_WORKER_EXE") {
        return Ok(PathBuf::from(p));
    }
    let me = std::env::current_exe().map_err(|e| format!("cannot locate ulpgauge: {e}"))?;
    let name = format!("ulpgauge{}", std::env::consts::EXE_SUFFIX);
    if me.file_name().is_some_and(|f| f == name.as_str()) {
        return Ok(me);
    }
    let dir = me.parent().map(PathBuf::from).unwrap_or_default();
    for candidate in [dir.join(&name), dir.join("..").join(&name)] {
        if candidate.is_file() {
            return Ok(candidate);
        }
    }
    Err(
        "cannot find the ulpgauge executable to run the worker (set ULPGAUGE_WORKER_EXE)"
            .to_string(),
    )
}

impl Runner {
    /// Validates the library and symbol without loading them here, then starts a worker (which
    /// loads them).  An error is one line naming the file and symbol.
    pub fn start(spec: &KernelSpec, options: RunnerOptions) -> Result<Runner, String> {
        loader::validate(&spec.library, &spec.symbol)?;
        let trailing = spec.trailing_args()?;
        if trailing.len() > super::abi::MAX_TRAILING {
            return Err(format!(
                "{}: at most {} trailing parameters are supported",
                spec.symbol,
                super::abi::MAX_TRAILING
            ));
        }
        let abi = Abi {
            elem_bytes: spec.format.width().div_ceil(8) as usize,
            gradient: spec.role.takes_gradient(),
            trailing,
        };
        let mut runner = Runner {
            spec: spec.clone(),
            options: RunnerOptions {
                batch_size: options.batch_size.max(1),
                ..options
            },
            abi,
            exe: worker_executable()?,
            worker: None,
            load_env: None,
            call_env_change: None,
            workers_started: 0,
        };
        runner.ensure_worker().map_err(|e| match e {
            CallError::Worker(m) => m,
            other => format!(
                "kernel library {}: the worker died while loading it ({})",
                spec.library.display(),
                other.label()
            ),
        })?;
        Ok(runner)
    }

    /// The kernel being run.
    pub fn spec(&self) -> &KernelSpec {
        &self.spec
    }

    /// The options in force.
    pub fn options(&self) -> &RunnerOptions {
        &self.options
    }

    fn ensure_worker(&mut self) -> Result<(), CallError> {
        if self.worker.is_some() {
            return Ok(());
        }
        let mut cmd = Command::new(&self.exe);
        cmd.arg("worker")
            .arg("--library")
            .arg(&self.spec.library)
            .arg("--symbol")
            .arg(&self.spec.symbol)
            .arg("--elem-bytes")
            .arg(self.abi.elem_bytes.to_string());
        if self.abi.gradient {
            cmd.arg("--gradient");
        }
        for t in &self.abi.trailing {
            cmd.arg("--trailing").arg(format!("{:08x}", t.to_bits()));
        }
        cmd.stdin(Stdio::piped()).stdout(Stdio::piped()).stderr(
            if std::env::var_os("ULPGAUGE_WORKER_STDERR").is_some() {
                Stdio::inherit()
            } else {
                Stdio::null()
            },
        );
        let mut child = cmd
            .spawn()
            .map_err(|e| CallError::Worker(format!("cannot start {}: {e}", self.exe.display())))?;
        let to = child.stdin.take().expect("piped stdin");
        let from = child.stdout.take().expect("piped stdout");
        // A batch of 2^16 f32 values is 256 KiB each way: a pipe that holds it whole saves the
        // two processes a dozen wake-ups per call. Linux only; the default size still works.
        #[cfg(target_os = "linux")]
        for fd in [to.as_raw_fd(), from.as_raw_fd()] {
            // SAFETY: fcntl on pipe descriptors we own; failure leaves the pipe as it was.
            unsafe { libc::fcntl(fd, libc::F_SETPIPE_SZ, PIPE_BYTES) };
        }
        self.workers_started += 1;
        self.worker = Some(Worker { child, to, from });
        let deadline = Instant::now() + self.options.batch_timeout.max(Duration::from_secs(10));
        let hello = (|| -> Result<Result<(bool, u32, u32), String>, io::Error> {
            let w = self.worker.as_mut().expect("worker");
            let mut src = Deadline {
                from: &mut w.from,
                deadline,
            };
            let mut r = Reader(&mut src);
            match r.u32()? {
                TAG_OK => Ok(Ok((r.u32()? != 0, r.u32()?, r.u32()?))),
                TAG_ERROR => Ok(Err(r.str()?)),
                _ => Err(io::Error::new(io::ErrorKind::InvalidData, "bad hello")),
            }
        })();
        match hello {
            Ok(Ok((readable, before, after))) => {
                if readable && self.load_env.is_none() {
                    self.load_env = Some((before, after));
                }
                Ok(())
            }
            Ok(Err(message)) => {
                self.kill();
                Err(CallError::Worker(message))
            }
            Err(e) => Err(self.failure(e)),
        }
    }

    /// Turns an I/O failure on the pipe into what happened to the worker, and discards it.
    fn failure(&mut self, e: io::Error) -> CallError {
        let fault = None;
        if e.kind() == io::ErrorKind::TimedOut {
            self.kill();
            return CallError::Hang;
        }
        self.died(fault)
    }

    fn died(&mut self, fault: Option<Fault>) -> CallError {
        let Some(mut w) = self.worker.take() else {
            return CallError::Worker("no worker".into());
        };
        drop(w.to);
        // The worker is dying or dead; give it a moment, then make sure.
        let deadline = Instant::now() + Duration::from_secs(2);
        let status = loop {
            match w.child.try_wait() {
                Ok(Some(s)) => break Some(s),
                Ok(None) if Instant::now() < deadline => {
                    std::thread::sleep(Duration::from_millis(1))
                }
                _ => {
                    let _ = w.child.kill();
                    break w.child.wait().ok();
                }
            }
        };
        let signal = match status {
            Some(s) => match (s.signal(), s.code()) {
                (Some(sig), _) => protocol::signal_name(sig),
                (None, Some(code)) => format!("exit {code}"),
                _ => "unknown".to_string(),
            },
            None => "unknown".to_string(),
        };
        CallError::Crashed { signal, fault }
    }

    fn kill(&mut self) {
        if let Some(mut w) = self.worker.take() {
            let _ = w.child.kill();
            let _ = w.child.wait();
        }
    }

    fn exchange_raw<T>(
        &mut self,
        request: &Writer,
        read: impl FnOnce(&mut Reader<Deadline>) -> io::Result<T>,
    ) -> Result<T, CallError> {
        let deadline = Instant::now() + self.options.batch_timeout;
        let w = self.worker.as_mut().expect("worker");
        if let Err(e) = request.send(&mut w.to) {
            return Err(self.failure(e));
        }
        let mut src = Deadline {
            from: &mut w.from,
            deadline,
        };
        let mut r = Reader(&mut src);
        let tag = match r.u32() {
            Ok(t) => t,
            Err(e) => return Err(self.failure(e)),
        };
        match tag {
            TAG_OK => match read(&mut r) {
                Ok(v) => Ok(v),
                Err(e) => Err(self.failure(e)),
            },
            TAG_FAULT => {
                let fault = decode_fault(&mut r).ok();
                Err(self.died(fault))
            }
            _ => {
                self.kill();
                Err(CallError::Worker(format!("unexpected reply tag {tag}")))
            }
        }
    }

    /// Sends one call request and waits for the reply.
    pub fn call(&mut self, request: &CallRequest) -> Result<CallReply, CallError> {
        self.ensure_worker()?;
        #[allow(clippy::redundant_closure)] // the closure pins the reader lifetime
        let reply = self.exchange_raw(&encode_call(request), |r| decode_reply(r))?;
        if self.call_env_change.is_none()
            && super::fpenv::control_bits(reply.env.0) != super::fpenv::control_bits(reply.env.1)
        {
            self.call_env_change = Some((request.first.len(), reply.env.0, reply.env.1));
        }
        Ok(reply)
    }

    fn call_plain(&mut self, first: &[u32], second: Option<&[u32]>) -> Result<Vec<u32>, CallError> {
        let req = CallRequest {
            layout: Layout::Padded,
            x_offset: 0,
            y_offset: 0,
            threads: 1,
            reps: 1,
            first: first.to_vec(),
            second: second.map(|s| s.to_vec()),
        };
        let mut reply = self.call(&req)?;
        Ok(reply.outputs.swap_remove(0))
    }

    /// Calls the kernel on `first` (x, or y for from-output gradient kernels) and optional
    /// `second` (g), in batches.
    pub fn run(&mut self, first: &[u32], second: Option<&[u32]>) -> RunOutcome {
        let mut outcome = RunOutcome {
            outputs: vec![None; first.len()],
            crashes: Vec::new(),
        };
        if second.is_some_and(|s| s.len() != first.len()) || second.is_none() == self.abi.gradient {
            outcome.crashes.push(CrashRecord {
                input: first.first().copied().unwrap_or(0),
                index: 0,
                signal: "worker error: gradient kernels take x and g of equal length".into(),
            });
            return outcome;
        }
        let mut stop = false;
        let mut lo = 0;
        while lo < first.len() && !stop {
            let hi = (lo + self.options.batch_size).min(first.len());
            self.run_range(lo, hi, first, second, &mut outcome, &mut stop);
            lo = hi;
        }
        outcome
    }

    fn run_range(
        &mut self,
        lo: usize,
        hi: usize,
        first: &[u32],
        second: Option<&[u32]>,
        outcome: &mut RunOutcome,
        stop: &mut bool,
    ) {
        if *stop || lo >= hi {
            return;
        }
        match self.call_plain(&first[lo..hi], second.map(|s| &s[lo..hi])) {
            Ok(ys) => {
                for (slot, y) in outcome.outputs[lo..hi].iter_mut().zip(ys) {
                    *slot = Some(y);
                }
            }
            Err(CallError::Worker(message)) => {
                // Not the kernel's doing: bisecting would only start more failing workers.
                outcome.crashes.push(CrashRecord {
                    input: first[lo],
                    index: lo,
                    signal: format!("worker error: {message}"),
                });
                *stop = true;
            }
            Err(e) if hi - lo == 1 => {
                outcome.crashes.push(CrashRecord {
                    input: first[lo],
                    index: lo,
                    signal: e.label(),
                });
                *stop |= self.options.stop_on_crash;
            }
            Err(_) => {
                let mid = lo + (hi - lo) / 2;
                self.run_range(lo, mid, first, second, outcome, stop);
                self.run_range(mid, hi, first, second, outcome, stop);
            }
        }
    }

    /// The kernel's own throughput in nanoseconds per element, timed inside the worker on the
    /// sample; `None` if the kernel crashed or hung.
    pub fn ns_per_element(&mut self, sample: &[u32], second: Option<&[u32]>) -> Option<f64> {
        if sample.is_empty() {
            return None;
        }
        let req = CallRequest {
            layout: Layout::Padded,
            x_offset: 0,
            y_offset: 0,
            threads: 1,
            reps: 7,
            first: sample.to_vec(),
            second: second.map(|s| s.to_vec()),
        };
        let mut w = encode_call(&req);
        w.0[0..4].copy_from_slice(&OP_BENCH.to_le_bytes());
        let saved = self.options.batch_timeout;
        // Timing runs many calls; allow for that beyond the per-batch limit.
        self.options.batch_timeout = saved * 20;
        let result = self
            .ensure_worker()
            .and_then(|_| self.exchange_raw(&w, |r| r.u64()));
        self.options.batch_timeout = saved;
        result.ok().map(f64::from_bits)
    }

    /// Element size in bytes.
    pub(crate) fn elem_bytes(&self) -> usize {
        self.abi.elem_bytes
    }
}

impl Drop for Runner {
    fn drop(&mut self) {
        if let Some(mut w) = self.worker.take() {
            let _ = Writer::default().u32(OP_QUIT).send(&mut w.to);
            drop(w.to);
            let deadline = Instant::now() + Duration::from_millis(200);
            while Instant::now() < deadline {
                if let Ok(Some(_)) = w.child.try_wait() {
                    return;
                }
                std::thread::sleep(Duration::from_millis(1));
            }
            let _ = w.child.kill();
            let _ = w.child.wait();
        }
    }
}

/// Pipe capacity asked for (the unprivileged Linux maximum by default).
#[cfg(target_os = "linux")]
const PIPE_BYTES: libc::c_int = 1 << 20;

/// Reads from the worker's stdout, failing with `TimedOut` past the deadline.
pub(crate) struct Deadline<'a> {
    from: &'a mut ChildStdout,
    deadline: Instant,
}

impl Read for Deadline<'_> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        loop {
            let left = self.deadline.saturating_duration_since(Instant::now());
            if left.is_zero() {
                return Err(io::Error::new(io::ErrorKind::TimedOut, "worker timed out"));
            }
            let mut pfd = libc::pollfd {
                fd: self.from.as_raw_fd(),
                events: libc::POLLIN,
                revents: 0,
            };
            let ms = left.as_millis().clamp(1, i32::MAX as u128) as i32;
            // SAFETY: one valid pollfd.
            let ready = unsafe { libc::poll(&mut pfd, 1, ms) };
            if ready < 0 {
                let e = io::Error::last_os_error();
                if e.kind() == io::ErrorKind::Interrupted {
                    continue;
                }
                return Err(e);
            }
            if ready == 0 {
                continue;
            }
            return self.from.read(buf);
        }
    }
}
