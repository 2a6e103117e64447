//! The main-process side: starts worker processes, sends batches, survives crashes, hangs and
//! forged replies, and keeps count of the calls that failed (bisection lives in `bisect.rs`).

use super::abi::Abi;
use super::bisect::Faults;
use super::protocol::{
    self, decode_bench, decode_fault, decode_reply, decode_reply_head, expect_token, send_call,
    CallArgs, CallReply, CallRequest, Fault, Layout, Reader, Writer, HELLO_MAGIC, OP_BENCH,
    OP_CALL, OP_QUIT, TAG_ERROR, TAG_FAULT, TAG_OK,
};
use super::spawn::{Deadline, WorkerProcess};
use super::{loader, KernelSpec};
use std::io;
use std::os::unix::process::ExitStatusExt;
use std::path::PathBuf;
use std::process::Command;
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
    /// Calls that may fail (crash, hang, or write into the channel; each one ends its worker,
    /// so this bounds the restarts) before the runner stops calling the kernel.
    pub max_restarts: u64,
    /// Time that calls which failed may take in all before the runner stops calling the kernel.
    pub max_fault_time: Duration,
    /// Address space each worker may use, in bytes (`RLIMIT_AS`).
    pub kernel_memory: u64,
    /// The caller's FP control word (`--caller-fpenv`), set in the worker before loading the
    /// library and before every call; `None` leaves the default environment.
    pub caller_fpenv: Option<u32>,
    /// `GLIBC_TUNABLES` for the worker alone (`--cpu-mask`): what its loader and libm see of
    /// the CPU.
    pub glibc_tunables: Option<String>,
    /// Worker processes that may call the kernel at once (`--kernel-workers`); more than one
    /// only while no call has failed (see `partner.rs`).
    pub workers: usize,
}

/// Default of [`RunnerOptions::workers`]: one per core, at most two (a check's reference
/// threads need the other cores as much).
pub fn default_workers() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get().min(2))
}

/// Most worker processes per kernel (`--kernel-workers`).
pub const MAX_WORKERS: usize = 8;

/// Default of [`RunnerOptions::max_restarts`]: a kernel that crashes on a few hundred inputs
/// is still pinned input by input (each crash costs about two restarts while bisecting).
pub const DEFAULT_MAX_RESTARTS: u64 = 1000;
/// Default of [`RunnerOptions::max_fault_time`].
pub const DEFAULT_MAX_FAULT_TIME: Duration = Duration::from_secs(300);

impl Default for RunnerOptions {
    fn default() -> Self {
        RunnerOptions {
            batch_timeout: Duration::from_secs(5),
            stop_on_crash: false,
            batch_size: 65_536,
            max_restarts: DEFAULT_MAX_RESTARTS,
            max_fault_time: DEFAULT_MAX_FAULT_TIME,
            kernel_memory: super::spawn::DEFAULT_KERNEL_MEMORY,
            caller_fpenv: None,
            glibc_tunables: None,
            workers: default_workers(),
        }
    }
}

/// Results of [`Runner::run`].
#[derive(Clone, Debug, Default)]
pub struct RunOutcome {
    /// Output bits per input; `None` where the kernel crashed or hung on that input, or was
    /// not called because the runner had stopped.
    pub outputs: Vec<Option<u32>>,
    /// Each input that crashed or hung the kernel, in input order; bounded by the number of
    /// calls that may fail ([`RunnerOptions::max_restarts`]).
    pub crashes: Vec<CrashRecord>,
}

/// One input the kernel crashed or hung on.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CrashRecord {
    /// The input's bits (x, or y for from-output gradient kernels).
    pub input: u32,
    /// Its index in the inputs given to [`Runner::run`].
    pub index: usize,
    /// "SIGSEGV", "SIGABRT", …, "hang", "channel: …", or why the runner stopped there.
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
    /// The worker ran out of its address space (`--kernel-memory`, in bytes) and died of
    /// `signal`.
    OutOfMemory {
        /// "SIGSEGV", "SIGABRT", …
        signal: String,
        /// The limit.
        limit: u64,
    },
    /// No reply within the call's deadline.
    Hang,
    /// The reply broke the protocol: the kernel wrote into the worker's channel.
    Channel(String),
    /// The runner stopped calling the kernel (too many failed calls); the reason.
    Stopped(String),
    /// The worker could not be started or could not load the library.
    Worker(String),
}

impl CallError {
    /// "SIGSEGV", "hang", "channel: …", the reason the runner stopped, or "worker error: …".
    pub fn label(&self) -> String {
        match self {
            CallError::Crashed { signal, .. } => signal.clone(),
            CallError::OutOfMemory { signal, limit } => format!(
                "out of memory: the kernel ran out of its {} address space \
                 (--kernel-memory; {signal})",
                super::spawn::show_size(*limit)
            ),
            CallError::Hang => "hang".to_string(),
            CallError::Channel(m) => {
                format!("channel: the kernel wrote into the worker's channel ({m})")
            }
            CallError::Stopped(reason) => reason.clone(),
            CallError::Worker(m) => format!("worker error: {m}"),
        }
    }
}

/// Runs one kernel in a worker process.
pub struct Runner {
    spec: KernelSpec,
    pub(super) options: RunnerOptions,
    abi: Abi,
    exe: PathBuf,
    worker: Option<WorkerProcess>,
    /// Token of the last request; replies must echo it.
    token: u64,
    /// Calls that failed, and whether the runner stopped.
    pub(super) faults: Faults,
    /// FP control word before and after loading the library (first worker), if readable.
    pub(crate) load_env: Option<(u32, u32)>,
    /// First call after which the FP control word differed from before it: (n, before, after).
    pub(crate) call_env_change: Option<(usize, u32, u32)>,
    /// Workers started so far (partners' not counted).
    pub workers_started: usize,
    /// Calls answered by partner workers (`--kernel-workers`).
    pub shared_calls: u64,
    /// Calls sent to the current worker.
    calls_in_worker: u64,
    /// Whether the last call sent was its worker's first (so a failure of it owes nothing to
    /// earlier calls).
    pub(super) last_call_fresh: bool,
    /// The kernel's measured pace in seconds per element (a slowly decaying maximum over
    /// calls that returned); `None` until one has.
    pace: Option<f64>,
    /// Inputs (x, g) that failed alone in a fresh worker, with their failure: later runs
    /// record them again without calling the kernel.
    pub(super) pinned: std::collections::HashMap<(u32, Option<u32>), String>,
    /// Further workers calling the kernel beside this runner's own (`partner.rs`).
    pub(super) partners: Vec<super::partner::Partner>,
    /// Outputs of the last plain call, kept so that the next one reads into the same memory
    /// instead of fresh, zeroed pages.
    pub(super) spare: Vec<u32>,
    /// Whether partners are over for this run (a call failed, or one could not start).
    pub(super) partners_ended: bool,
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

/// Where a runner's token sequence starts: different per runner, so a stale or replayed reply
/// does not match by chance.
fn first_token() -> u64 {
    use std::hash::{BuildHasher, Hasher};
    let mut h = std::collections::hash_map::RandomState::new().build_hasher();
    h.write_u128(
        std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_nanos()),
    );
    h.finish()
}

/// What came back for one request, read while the worker's pipe is borrowed.
enum Got<T> {
    Reply(T),
    Fault(Fault),
    Io(io::Error),
    Forged(String),
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
        let strided = spec.signature != super::Signature::Contiguous;
        if strided && spec.role.takes_gradient() {
            return Err(format!(
                "{}: the strided signature takes forward and derivative kernels only",
                spec.symbol
            ));
        }
        let (sx, sy) = spec.signature.strides();
        if sx == 0 || sy == 0 || sx.abs().max(sy.abs()) > super::stride::MAX_STRIDE {
            return Err(format!(
                "{}: strides {sx},{sy} out of range (nonzero, |stride| <= {})",
                spec.symbol,
                super::stride::MAX_STRIDE
            ));
        }
        crate::guard::install_handler();
        let abi = Abi {
            elem_bytes: spec.input_format.width().div_ceil(8) as usize,
            out_bytes: spec.format.width().div_ceil(8) as usize,
            gradient: spec.role.takes_gradient(),
            trailing,
            strided,
        };
        // A call's buffers span n·|stride| elements; the protocol bounds that span.
        let widest = sx.unsigned_abs().max(sy.unsigned_abs()) as usize;
        let mut runner = Runner {
            spec: spec.clone(),
            options: RunnerOptions {
                batch_size: options.batch_size.clamp(1, protocol::MAX_ELEMENTS / widest),
                ..options
            },
            abi,
            exe: worker_executable()?,
            worker: None,
            token: first_token(),
            faults: Faults::default(),
            load_env: None,
            call_env_change: None,
            workers_started: 0,
            shared_calls: 0,
            calls_in_worker: 0,
            last_call_fresh: false,
            pace: None,
            pinned: std::collections::HashMap::new(),
            partners: Vec::new(),
            partners_ended: false,
            spare: Vec::new(),
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

    /// Why the runner stopped calling the kernel, once it has.
    pub fn stopped(&self) -> Option<&str> {
        self.faults.stopped.as_deref()
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
            .arg(self.abi.elem_bytes.to_string())
            .arg("--out-bytes")
            .arg(self.abi.out_bytes.to_string());
        if self.abi.gradient {
            cmd.arg("--gradient");
        }
        if self.abi.strided {
            cmd.arg("--strided");
        }
        for t in &self.abi.trailing {
            cmd.arg("--trailing").arg(format!("{:08x}", t.to_bits()));
        }
        if let Some(word) = self.options.caller_fpenv {
            cmd.arg("--fpenv").arg(format!("{word:x}"));
        }
        if let Some(tunables) = &self.options.glibc_tunables {
            cmd.env("GLIBC_TUNABLES", tunables);
        }
        let worker = WorkerProcess::spawn(cmd, self.options.kernel_memory)
            .map_err(|e| CallError::Worker(format!("cannot start {}: {e}", self.exe.display())))?;
        self.workers_started += 1;
        self.calls_in_worker = 0;
        let w = self.worker.insert(worker);
        let deadline = Instant::now() + self.options.batch_timeout.max(Duration::from_secs(10));
        let hello = (|| -> io::Result<Result<(bool, u32, u32), String>> {
            let mut src = w.replies(deadline);
            let mut r = Reader(&mut src);
            match r.u32()? {
                TAG_OK => {
                    if r.u32()? != HELLO_MAGIC {
                        return Err(forged("a greeting without its magic word"));
                    }
                    let readable = match r.u32()? {
                        0 => false,
                        1 => true,
                        _ => return Err(forged("a greeting with a bad flag")),
                    };
                    Ok(Ok((readable, r.u32()?, r.u32()?)))
                }
                TAG_ERROR => Ok(Err(r.str()?)),
                t => Err(forged(&format!("a greeting with tag {t}"))),
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
        match e.kind() {
            io::ErrorKind::TimedOut => {
                self.kill();
                CallError::Hang
            }
            io::ErrorKind::InvalidData => {
                self.kill();
                CallError::Channel(e.to_string())
            }
            _ => self.died(None),
        }
    }

    /// The worker is dying or dead: gives it a moment, ends its group and names the cause.  A
    /// fault record the worker's own death does not confirm was forged by the kernel.
    fn died(&mut self, fault: Option<Fault>) -> CallError {
        let Some(w) = self.worker.take() else {
            return CallError::Worker("no worker".into());
        };
        let status = w.end(Duration::from_secs(2));
        let signo = status.and_then(|s| s.signal());
        if let Some(f) = fault {
            if Some(f.signo) != signo {
                let death = signo.map_or("did not die of a signal".to_string(), |s| {
                    format!("died of {}", protocol::signal_name(s))
                });
                return CallError::Channel(format!(
                    "a fault record for {} while the worker {death}",
                    protocol::signal_name(f.signo)
                ));
            }
        }
        let signal = match status {
            Some(s) => match (s.signal(), s.code()) {
                (Some(sig), _) => protocol::signal_name(sig),
                (None, Some(code)) => format!("exit {code}"),
                _ => "unknown".to_string(),
            },
            None => "unknown".to_string(),
        };
        if fault.is_some_and(|f| f.out_of_memory) {
            return CallError::OutOfMemory {
                signal,
                limit: self.options.kernel_memory,
            };
        }
        CallError::Crashed { signal, fault }
    }

    /// Ends the worker and everything in its process group now.
    fn kill(&mut self) {
        if let Some(w) = self.worker.take() {
            w.end(Duration::ZERO);
        }
    }

    /// Runs `f` unless the runner has stopped, and counts what it gives: a call that crashed,
    /// hung or broke the protocol counts against the limits of [`RunnerOptions`].
    fn guarded<T>(
        &mut self,
        f: impl FnOnce(&mut Self) -> Result<T, CallError>,
    ) -> Result<T, CallError> {
        if let Some(reason) = &self.faults.stopped {
            return Err(CallError::Stopped(reason.clone()));
        }
        let started = Instant::now();
        let result = f(self);
        match &result {
            Ok(_) => self.faults.succeeded(),
            Err(CallError::Worker(_) | CallError::Stopped(_)) => {}
            Err(e) => self.faults.failed(e, started.elapsed(), &self.options),
        }
        result
    }

    /// Sends `request` under a fresh token and reads the reply with `read`, which checks it
    /// against the request.
    fn exchange<T>(
        &mut self,
        op: u32,
        request: &CallArgs,
        timeout: Duration,
        read: impl FnOnce(&mut Reader<Deadline>) -> io::Result<T>,
    ) -> Result<T, CallError> {
        self.token = self.token.wrapping_add(1);
        let token = self.token;
        let deadline = Instant::now() + timeout;
        let Some(w) = self.worker.as_mut() else {
            return Err(CallError::Worker("no worker".into()));
        };
        self.calls_in_worker += 1;
        self.last_call_fresh = self.calls_in_worker == 1;
        if let Err(e) = send_call(&mut w.to, op, token, request) {
            return Err(self.failure(e));
        }
        let got = {
            let mut src = w.replies(deadline);
            let mut r = Reader(&mut src);
            match r.u32() {
                Err(e) => Got::Io(e),
                Ok(TAG_OK) => match expect_token(&mut r, token).and_then(|_| read(&mut r)) {
                    Ok(v) => Got::Reply(v),
                    Err(e) => Got::Io(e),
                },
                Ok(TAG_FAULT) => match decode_fault(&mut r) {
                    Ok(f) if f.token == token => Got::Fault(f),
                    Ok(f) => Got::Forged(format!(
                        "a fault record for request {:#x} while {token:#x} was asked",
                        f.token
                    )),
                    Err(e) => Got::Io(e),
                },
                Ok(t) => Got::Forged(format!("a reply with unknown tag {t}")),
            }
        };
        match got {
            Got::Reply(v) => Ok(v),
            Got::Fault(f) => Err(self.died(Some(f))),
            Got::Io(e) => Err(self.failure(e)),
            Got::Forged(m) => {
                self.kill();
                Err(CallError::Channel(m))
            }
        }
    }

    /// Sends one call request and waits for the reply, until the deadline the kernel's pace
    /// gives this much work ([`Runner::deadline`]).
    pub fn call(&mut self, request: &CallRequest) -> Result<CallReply, CallError> {
        let args = request.args();
        self.call_args(&args, |r| {
            let reply = decode_reply(r, request)?;
            let env = reply.env;
            Ok((reply, env))
        })
    }

    /// [`Runner::call`] with borrowed arguments, the reply read by `read` (which checks it
    /// against them and gives it with its FP control words before and after the call).
    fn call_args<T>(
        &mut self,
        args: &CallArgs,
        read: impl FnOnce(&mut Reader<super::spawn::Deadline>) -> io::Result<(T, (u32, u32))>,
    ) -> Result<T, CallError> {
        let work = args.first.len().max(1) as f64 * args.reps.max(1) as f64;
        let timeout = self.deadline(work);
        let ((reply, env), took) = self.guarded(|runner| {
            runner.ensure_worker()?;
            // Time to start a worker is not the kernel's pace.
            let started = Instant::now();
            let reply = runner.exchange(OP_CALL, args, timeout, read)?;
            Ok((reply, started.elapsed().as_secs_f64()))
        })?;
        let sample = (took - PACE_OVERHEAD.as_secs_f64()).max(0.0) / work;
        self.pace = Some(self.pace.map_or(sample, |p| sample.max(p * PACE_DECAY)));
        if self.call_env_change.is_none()
            && super::fpenv::control_bits(env.0) != super::fpenv::control_bits(env.1)
        {
            self.call_env_change = Some((args.first.len(), env.0, env.1));
        }
        Ok(reply)
    }

    /// One plain call (padded buffers, one thread, one repetition): the outputs.
    pub(super) fn call_plain(
        &mut self,
        first: &[u32],
        second: Option<&[u32]>,
    ) -> Result<Vec<u32>, CallError> {
        let mut out = Vec::new();
        self.call_plain_into(first, second, &mut out)?;
        Ok(out)
    }

    /// [`Runner::call_plain`] into `out`, whose allocation is reused: the arguments go from
    /// the caller's slices straight into the pipe and the outputs straight from it into
    /// `out`, with no request or reply buffer between.
    pub(super) fn call_plain_into(
        &mut self,
        first: &[u32],
        second: Option<&[u32]>,
        out: &mut Vec<u32>,
    ) -> Result<(), CallError> {
        let args = CallArgs {
            layout: Layout::Padded,
            x_offset: 0,
            y_offset: 0,
            threads: 1,
            reps: 1,
            first,
            second,
            strides: self.strides(),
        };
        self.call_args(&args, |r| {
            // One thread, one repetition: the head's check leaves one array of n.
            let head = decode_reply_head(r, &args)?;
            r.u32s_into(head.n, out)?;
            Ok(((), head.env))
        })
    }

    /// The kernel's own throughput in nanoseconds per element, timed inside the worker on the
    /// sample; `None` if the kernel crashed or hung, or the runner has stopped.
    pub fn ns_per_element(&mut self, sample: &[u32], second: Option<&[u32]>) -> Option<f64> {
        if sample.is_empty() {
            return None;
        }
        // Timing runs some nine calls of at least 2 ms: a slow kernel is timed on fewer inputs
        // (a tenth of a second's worth each), and the timeout allows for all of them.
        let n = match self.pace {
            Some(p) if p > 0.0 => ((0.1 / p) as usize).max(16).min(sample.len()),
            _ => sample.len(),
        };
        let req = CallRequest {
            layout: Layout::Padded,
            x_offset: 0,
            y_offset: 0,
            threads: 1,
            reps: 7,
            first: sample[..n].to_vec(),
            second: second.map(|s| s[..n].to_vec()),
            strides: self.strides(),
        };
        let timeout = self.options.batch_timeout.saturating_mul(20);
        self.guarded(|runner| {
            runner.ensure_worker()?;
            #[allow(clippy::redundant_closure)] // the closure pins the reader lifetime
            runner.exchange(OP_BENCH, &req.args(), timeout, |r| decode_bench(r))
        })
        .ok()
    }

    /// The kernel's measured pace in seconds per element (of calls that returned), if known.
    pub fn pace(&self) -> Option<f64> {
        self.pace
    }

    /// How long a call of `work` elements (n × repetitions) may take before the kernel counts
    /// as hung: [`PACE_FACTOR`] times what its pace predicts, at least [`PACE_FLOOR`], at most
    /// the user's timeout (the whole timeout until a call has returned).
    pub fn deadline(&self, work: f64) -> Duration {
        let ceiling = self.options.batch_timeout;
        match self.pace {
            None => ceiling,
            Some(p) => {
                let want = PACE_FLOOR.as_secs_f64() + PACE_FACTOR * p * work;
                Duration::from_secs_f64(want.min(ceiling.as_secs_f64()))
            }
        }
    }

    /// Elements a call should hold so that the pace predicts at most a quarter of the timeout
    /// (between 1 and `most`); `most` until the pace is known.
    pub fn elements_for(&self, most: usize, reps: usize) -> usize {
        match self.pace {
            Some(p) if p > 0.0 => {
                let fit = self.options.batch_timeout.as_secs_f64() / 4.0 / (p * reps.max(1) as f64);
                (fit as usize).clamp(1, most.max(1))
            }
            _ => most.max(1),
        }
    }

    /// The strides the sweep calls with ((1, 1) for contiguous kernels).
    pub fn strides(&self) -> (i32, i32) {
        self.spec.signature.strides()
    }

    /// Element size in bytes.
    pub(crate) fn elem_bytes(&self) -> usize {
        self.abi.elem_bytes.max(self.abi.out_bytes)
    }

    /// Whether the kernel takes a second input array.
    pub(super) fn gradient(&self) -> bool {
        self.abi.gradient
    }
}

impl Drop for Runner {
    fn drop(&mut self) {
        if let Some(mut w) = self.worker.take() {
            let _ = Writer::default().u32(OP_QUIT).send(&mut w.to);
            w.end(Duration::from_millis(200));
        }
    }
}

/// Shortest deadline of a call once the pace is known: room for a loaded machine's stalls.
pub const PACE_FLOOR: Duration = Duration::from_secs(1);
/// How many times its predicted time a call may take.
pub const PACE_FACTOR: f64 = 20.0;
/// A call's fixed cost (pipes, wake-ups) left out of the pace it shows.
const PACE_OVERHEAD: Duration = Duration::from_millis(20);
/// How much of the slowest pace seen is kept per call that returned: a stall is forgotten
/// after some dozens of calls, a kernel's steady pace never.
const PACE_DECAY: f64 = 0.95;

fn forged(what: &str) -> io::Error {
    io::Error::new(io::ErrorKind::InvalidData, what.to_string())
}
