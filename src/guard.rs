//! What must not outlive ulpgauge: worker process groups, processes a kernel left behind, and
//! temporary report files.
//!
//! Owners remove their own entries when they finish; a handler on SIGINT, SIGTERM and SIGHUP
//! kills the registered groups and deletes the registered temporary files, then lets the signal
//! end the process as it would have.  The handler only touches fixed tables of atomics (no
//! allocation, no locks), so it is async-signal-safe.

use std::ffi::CString;
use std::path::Path;
use std::sync::atomic::{AtomicI32, AtomicPtr, Ordering};
use std::sync::Once;

/// Worker process groups alive at once (more are still killed by their runner, just not by
/// the signal handler).
const GROUP_SLOTS: usize = 256;
/// Temporary files being written at once.
const TEMP_SLOTS: usize = 32;

static GROUPS: [AtomicI32; GROUP_SLOTS] = [const { AtomicI32::new(0) }; GROUP_SLOTS];
static TEMPS: [AtomicPtr<libc::c_char>; TEMP_SLOTS] =
    [const { AtomicPtr::new(std::ptr::null_mut()) }; TEMP_SLOTS];
static INSTALL: Once = Once::new();

/// The signals after which nothing of ours may be left behind.
const SIGNALS: [libc::c_int; 3] = [libc::SIGINT, libc::SIGTERM, libc::SIGHUP];

/// Installs the cleanup handler for SIGINT, SIGTERM and SIGHUP, once; a signal the process
/// ignores, or already handles itself, is left alone.
pub fn install_handler() {
    INSTALL.call_once(|| {
        for sig in SIGNALS {
            // SAFETY: reads the current disposition, then installs an async-signal-safe handler
            // only where the default (terminate) was in force.
            unsafe {
                let mut old: libc::sigaction = std::mem::zeroed();
                if libc::sigaction(sig, std::ptr::null(), &mut old) != 0
                    || old.sa_sigaction != libc::SIG_DFL
                {
                    continue;
                }
                let mut action: libc::sigaction = std::mem::zeroed();
                action.sa_sigaction = on_signal as *const () as usize;
                libc::sigemptyset(&mut action.sa_mask);
                libc::sigaction(sig, &action, std::ptr::null_mut());
            }
        }
    });
}

extern "C" fn on_signal(signo: libc::c_int) {
    for slot in &GROUPS {
        let pgid = slot.swap(0, Ordering::SeqCst);
        if pgid > 0 {
            // SAFETY: kill is async-signal-safe; pgid is a group this process created.
            unsafe { libc::kill(-pgid, libc::SIGKILL) };
        }
    }
    for slot in &TEMPS {
        let path = slot.swap(std::ptr::null_mut(), Ordering::SeqCst);
        if !path.is_null() {
            // SAFETY: unlink is async-signal-safe; the pointer is a leaked, NUL-terminated
            // CString nobody frees once it has left the table.
            unsafe { libc::unlink(path) };
        }
    }
    // SAFETY: signal and raise are async-signal-safe; the signal is blocked until the handler
    // returns, then takes its default action.
    unsafe {
        libc::signal(signo, libc::SIG_DFL);
        libc::raise(signo);
    }
}

/// A worker's process group, registered so that a signal kills it; unregistered on drop.
#[derive(Debug)]
pub struct Group {
    pgid: i32,
    slot: Option<usize>,
}

impl Group {
    /// Registers the group led by `pgid` (the worker's pid when it was started with
    /// `process_group(0)`).
    pub fn new(pgid: i32) -> Group {
        let slot = GROUPS.iter().position(|s| {
            s.compare_exchange(0, pgid, Ordering::SeqCst, Ordering::SeqCst)
                .is_ok()
        });
        Group { pgid, slot }
    }

    /// Kills every process of the group: the worker and whatever the kernel forked.  Call it
    /// before reaping the leader, while its pid (the group's id) cannot be reused.
    pub fn kill(&self) {
        if self.pgid > 0 {
            // SAFETY: signals only processes of the group this runner created.
            unsafe { libc::kill(-self.pgid, libc::SIGKILL) };
        }
    }
}

impl Drop for Group {
    fn drop(&mut self) {
        if let Some(i) = self.slot {
            let _ = GROUPS[i].compare_exchange(self.pgid, 0, Ordering::SeqCst, Ordering::SeqCst);
        }
    }
}

/// A temporary file being written, registered so that a signal deletes it; unregistered (not
/// deleted) on drop, since by then it was renamed or removed by its writer.
pub struct Temporary {
    slot: Option<usize>,
}

impl Temporary {
    /// Registers `path`.
    pub fn new(path: &Path) -> Temporary {
        use std::os::unix::ffi::OsStrExt;
        let Ok(c) = CString::new(path.as_os_str().as_bytes()) else {
            return Temporary { slot: None };
        };
        let raw = c.into_raw();
        let slot = TEMPS.iter().position(|s| {
            s.compare_exchange(
                std::ptr::null_mut(),
                raw,
                Ordering::SeqCst,
                Ordering::SeqCst,
            )
            .is_ok()
        });
        if slot.is_none() {
            // SAFETY: raw came from into_raw just above and was never shared.
            drop(unsafe { CString::from_raw(raw) });
        }
        Temporary { slot }
    }
}

impl Drop for Temporary {
    fn drop(&mut self) {
        if let Some(i) = self.slot {
            let raw = TEMPS[i].swap(std::ptr::null_mut(), Ordering::SeqCst);
            if !raw.is_null() {
                // SAFETY: whoever swaps the pointer out owns it; the handler never frees.
                drop(unsafe { CString::from_raw(raw) });
            }
        }
    }
}

/// Makes this process the reaper of its orphaned descendants (Linux), so that a process a
/// kernel detached from its worker (a double fork, `setsid`) comes back to us and
/// [`reap_orphans`] can end it.  For the command-line program only: a library user's own
/// descendants would be adopted too.
pub fn adopt_orphans() {
    #[cfg(target_os = "linux")]
    // SAFETY: prctl with an integer argument; failure only means orphans go to init.
    unsafe {
        libc::prctl(libc::PR_SET_CHILD_SUBREAPER, 1, 0, 0, 0);
    }
}

/// Kills and reaps every child of this process outside its own process group: with
/// [`adopt_orphans`] in force those are workers' leftovers (workers are reaped by their
/// runners before this runs; compilers and other helpers share our group).  Returns how many.
pub fn reap_orphans() -> usize {
    let me = std::process::id() as i32;
    // SAFETY: getpgrp has no preconditions.
    let own_group = unsafe { libc::getpgrp() };
    let mut reaped = 0;
    // A kernel's child may fork again while we look; a few passes catch the descendants that
    // get reparented to us as their parents die.
    for _ in 0..8 {
        let strays: Vec<i32> = children(me)
            .into_iter()
            .filter(|&(_, pgid)| pgid != own_group)
            .map(|(pid, _)| pid)
            .collect();
        if strays.is_empty() {
            break;
        }
        for &pid in &strays {
            // SAFETY: pid is our child (not yet reaped, so the pid cannot have been reused).
            unsafe { libc::kill(pid, libc::SIGKILL) };
        }
        for pid in strays {
            let deadline = std::time::Instant::now() + std::time::Duration::from_secs(1);
            loop {
                let mut status = 0;
                // SAFETY: waits for our own child without blocking.
                let r = unsafe { libc::waitpid(pid, &mut status, libc::WNOHANG) };
                if r != 0 || std::time::Instant::now() > deadline {
                    break;
                }
                std::thread::sleep(std::time::Duration::from_millis(2));
            }
            reaped += 1;
        }
    }
    reaped
}

/// (pid, process group) of every child of `parent`, from /proc (empty where there is none).
fn children(parent: i32) -> Vec<(i32, i32)> {
    let Ok(dir) = std::fs::read_dir("/proc") else {
        return Vec::new();
    };
    dir.filter_map(|e| {
        let e = e.ok()?;
        let pid: i32 = e.file_name().to_str()?.parse().ok()?;
        let stat = std::fs::read_to_string(e.path().join("stat")).ok()?;
        // "pid (comm) state ppid pgrp …": comm may hold spaces and parentheses.
        let rest = &stat[stat.rfind(')')? + 1..];
        let mut fields = rest.split_whitespace();
        let _state = fields.next()?;
        let ppid: i32 = fields.next()?.parse().ok()?;
        let pgrp: i32 = fields.next()?.parse().ok()?;
        (ppid == parent).then_some((pid, pgrp))
    })
    .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_signal_removes_registered_temporaries_and_ends_the_process() {
        let path = std::env::temp_dir().join(format!(".ulpgauge-guard-{}.tmp", std::process::id()));
        std::fs::write(&path, "half a report").unwrap();
        // Registered before the fork: the child inherits the table and must not allocate.
        let temp = Temporary::new(&path);
        // SAFETY: the child only makes async-signal-safe calls (sigaction, raise, _exit).
        let child = unsafe { libc::fork() };
        if child == 0 {
            unsafe {
                let mut action: libc::sigaction = std::mem::zeroed();
                action.sa_sigaction = on_signal as *const () as usize;
                libc::sigemptyset(&mut action.sa_mask);
                libc::sigaction(libc::SIGTERM, &action, std::ptr::null_mut());
                libc::raise(libc::SIGTERM);
                libc::_exit(0);
            }
        }
        let mut status = 0;
        // SAFETY: waits for the child forked above.
        assert_eq!(unsafe { libc::waitpid(child, &mut status, 0) }, child);
        // The handler re-raised the signal with its default action (POSIX: WIFSIGNALED).
        assert!(libc::WIFSIGNALED(status) && libc::WTERMSIG(status) == libc::SIGTERM);
        assert!(!path.exists(), "the temporary file was removed");
        drop(temp);
        slots_are_released_on_drop();
    }

    /// Run by the test above, so that no other test takes the slot in between.
    fn slots_are_released_on_drop() {
        let t = Temporary::new(Path::new("/nonexistent/ulpgauge-slot-test"));
        let i = t.slot.expect("a free slot");
        assert!(!TEMPS[i].load(Ordering::SeqCst).is_null());
        drop(t);
        assert!(TEMPS[i].load(Ordering::SeqCst).is_null());
        let g = Group::new(i32::MAX);
        let j = g.slot.expect("a free slot");
        assert_eq!(GROUPS[j].load(Ordering::SeqCst), i32::MAX);
        drop(g);
        assert_eq!(GROUPS[j].load(Ordering::SeqCst), 0);
    }
}
