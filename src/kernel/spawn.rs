//! One worker process: started in a process group of its own under an address-space limit,
//! read with a deadline, and ended with everything the kernel forked.

use crate::guard::Group;
use std::io::{self, Read};
use std::os::fd::AsRawFd;
use std::os::unix::process::CommandExt;
use std::process::{Child, ChildStdin, ChildStdout, Command, ExitStatus, Stdio};
use std::time::{Duration, Instant};

/// Pipe capacity asked for (the unprivileged Linux maximum by default).
#[cfg(target_os = "linux")]
const PIPE_BYTES: libc::c_int = 1 << 20;

/// How often a read that waits looks whether the worker is still alive.
const LIVENESS_POLL: Duration = Duration::from_millis(50);

/// A running worker and its pipes.
pub(crate) struct WorkerProcess {
    child: Child,
    /// Requests.
    pub(crate) to: ChildStdin,
    /// Replies.
    pub(crate) from: ChildStdout,
    group: Group,
}

impl WorkerProcess {
    /// Starts `cmd` (the worker command line) as the leader of a new process group, with the
    /// runner's pid for the worker's parent watch and at most `memory` bytes of address space
    /// (`RLIMIT_AS`, set in the child before exec, so the kernel can never grow past it).
    pub(crate) fn spawn(mut cmd: Command, memory: u64) -> io::Result<WorkerProcess> {
        // SAFETY: setrlimit is async-signal-safe and touches only the child being started.
        unsafe {
            cmd.pre_exec(move || {
                let limit = libc::rlimit {
                    rlim_cur: memory as libc::rlim_t,
                    rlim_max: memory as libc::rlim_t,
                };
                if libc::setrlimit(libc::RLIMIT_AS, &limit) != 0 {
                    return Err(io::Error::last_os_error());
                }
                Ok(())
            });
        }
        cmd.arg("--parent")
            .arg(std::process::id().to_string())
            .process_group(0)
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(if std::env::var_os("ULPGAUGE_WORKER_STDERR").is_some() {
                Stdio::inherit()
            } else {
                Stdio::null()
            });
        let mut child = cmd.spawn()?;
        let group = Group::new(child.id() as i32);
        let (Some(to), Some(from)) = (child.stdin.take(), child.stdout.take()) else {
            group.kill();
            let _ = child.wait();
            return Err(io::Error::other("the worker's pipes were not set up"));
        };
        // A batch of 2^16 f32 values is 256 KiB each way: a pipe that holds it whole saves the
        // two processes a dozen wake-ups per call. Linux only; the default size still works.
        #[cfg(target_os = "linux")]
        for fd in [to.as_raw_fd(), from.as_raw_fd()] {
            // SAFETY: fcntl on pipe descriptors we own; failure leaves the pipe as it was.
            unsafe { libc::fcntl(fd, libc::F_SETPIPE_SZ, PIPE_BYTES) };
        }
        Ok(WorkerProcess {
            child,
            to,
            from,
            group,
        })
    }

    /// A reader of the replies that fails with `TimedOut` at `deadline`, and with
    /// `UnexpectedEof` once the worker has exited and left nothing to read (even if a process
    /// the kernel forked still holds the pipe open).
    pub(crate) fn replies(&mut self, deadline: Instant) -> Deadline<'_> {
        Deadline {
            from: &mut self.from,
            pid: self.child.id() as i32,
            deadline,
        }
    }

    /// Closes the request pipe, gives the worker `grace` to exit on its own, then kills its
    /// whole process group and reaps it; the worker's exit status, if it could be had.
    pub(crate) fn end(self, grace: Duration) -> Option<ExitStatus> {
        let WorkerProcess {
            mut child,
            to,
            from,
            group,
        } = self;
        drop(to);
        let deadline = Instant::now() + grace;
        while !exited(child.id() as i32) && Instant::now() < deadline {
            std::thread::sleep(Duration::from_millis(1));
        }
        // The leader is not reaped yet, so its pid (the group's id) cannot have been reused.
        group.kill();
        drop(from);
        child.wait().ok()
    }
}

/// Smallest `--kernel-memory`: the worker alone (runtime, library, buffers, the arenas of the
/// hygiene checks' threads) peaks near 0.5 GiB of address space.
pub const MIN_KERNEL_MEMORY: u64 = 1 << 30;
/// Largest `--kernel-memory`: the user address space of x86-64 and AArch64 (47/48-bit).
pub const MAX_KERNEL_MEMORY: u64 = 1 << 47;
/// Default `--kernel-memory`.
pub const DEFAULT_KERNEL_MEMORY: u64 = 4 << 30;

/// Parses a size for `--kernel-memory` (`4G`, `4GiB`, `1536M`, `0.5T`, bytes without a unit;
/// units are powers of 1024) and checks its bounds; `what` names the option in the error.
pub fn kernel_memory(text: &str, what: &str) -> Result<u64, String> {
    let t = text.trim();
    let split = t
        .find(|c: char| !(c.is_ascii_digit() || c == '.'))
        .unwrap_or(t.len());
    let (number, unit) = t.split_at(split);
    let unit = unit.trim().to_ascii_lowercase();
    let unit = unit
        .strip_suffix("ib")
        .or_else(|| unit.strip_suffix('b'))
        .unwrap_or(&unit);
    let scale: u64 = match unit {
        "" => 1,
        "k" => 1 << 10,
        "m" => 1 << 20,
        "g" => 1 << 30,
        "t" => 1 << 40,
        _ => {
            return Err(format!(
                "{what} must be a size such as 4G, 1536M or 0.5T, got '{text}'"
            ))
        }
    };
    let value = number
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .map(|v| v * scale as f64)
        .ok_or_else(|| format!("{what} must be a size such as 4G, 1536M or 0.5T, got '{text}'"))?;
    if !(MIN_KERNEL_MEMORY as f64..=MAX_KERNEL_MEMORY as f64).contains(&value) {
        return Err(format!(
            "{what} must be between {} and {} (the worker itself needs about 0.5 GiB), got '{text}'",
            show_size(MIN_KERNEL_MEMORY),
            show_size(MAX_KERNEL_MEMORY)
        ));
    }
    Ok(value as u64)
}

/// A size in the largest binary unit that keeps it readable: "4 GiB", "1.5 GiB", "512 MiB".
pub fn show_size(bytes: u64) -> String {
    let (unit, scale) = [("TiB", 1u64 << 40), ("GiB", 1 << 30), ("MiB", 1 << 20)]
        .into_iter()
        .find(|&(_, s)| bytes >= s)
        .unwrap_or(("KiB", 1 << 10));
    let v = bytes as f64 / scale as f64;
    if v.fract() == 0.0 {
        format!("{v} {unit}")
    } else {
        format!("{:.2} {unit}", v)
            .replace(".00 ", " ")
            .replace("0 ", " ")
    }
}

/// Whether the child `pid` has exited, without reaping it.
fn exited(pid: i32) -> bool {
    // SAFETY: waitid with WNOWAIT only inspects our own child.
    unsafe {
        let mut info: libc::siginfo_t = std::mem::zeroed();
        let r = libc::waitid(
            libc::P_PID,
            pid as libc::id_t,
            &mut info,
            libc::WEXITED | libc::WNOHANG | libc::WNOWAIT,
        );
        r == 0 && info.si_pid() == pid
    }
}

/// Reads from the worker's reply pipe, failing with `TimedOut` past the deadline.
pub(crate) struct Deadline<'a> {
    from: &'a mut ChildStdout,
    pid: i32,
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
            let ms = left.min(LIVENESS_POLL).as_millis().max(1) as i32;
            // SAFETY: one valid pollfd.
            let ready = unsafe { libc::poll(&mut pfd, 1, ms) };
            if ready < 0 {
                let e = io::Error::last_os_error();
                if e.kind() == io::ErrorKind::Interrupted {
                    continue;
                }
                return Err(e);
            }
            if ready > 0 {
                return self.from.read(buf);
            }
            if exited(self.pid) {
                // Whatever it wrote before dying is in the pipe already.
                // SAFETY: as above, without waiting.
                if unsafe { libc::poll(&mut pfd, 1, 0) } > 0 {
                    return self.from.read(buf);
                }
                return Err(io::Error::new(
                    io::ErrorKind::UnexpectedEof,
                    "the worker exited",
                ));
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sizes_parse_in_binary_units_and_are_bounded() {
        // Binary prefixes (IEC 80000-13: Ki = 2^10, Mi = 2^20, Gi = 2^30, Ti = 2^40).
        for (text, bytes) in [
            ("4G", 4u64 << 30),
            ("4GiB", 4 << 30),
            ("4 gb", 4 << 30),
            ("1536M", 1536 << 20),
            ("0.5T", 1 << 39),
            ("1073741824", 1 << 30),
            ("2097152K", 2 << 30),
        ] {
            assert_eq!(kernel_memory(text, "--kernel-memory"), Ok(bytes), "{text}");
        }
        for bad in [
            "", "G", "4X", "-4G", "512M", "4", "1e3G", "inf", "NaNG", "200T", "1.2.3G",
        ] {
            let e = kernel_memory(bad, "--kernel-memory").unwrap_err();
            assert!(e.starts_with("--kernel-memory must be"), "{bad}: {e}");
        }
        assert_eq!(show_size(4 << 30), "4 GiB");
        assert_eq!(show_size(1536 << 20), "1.5 GiB");
        assert_eq!(show_size(1 << 47), "128 TiB");
    }
}
