//! One worker process: started in a process group of its own, read with a deadline, and ended
//! with everything the kernel forked.

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
    /// runner's pid for the worker's parent watch.
    pub(crate) fn spawn(mut cmd: Command) -> io::Result<WorkerProcess> {
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
