//! Writing report files, and checking before any work that they can be written.
//!
//! A regular file (or a path that does not exist yet) is replaced atomically: a temporary file
//! in the same folder, renamed over it.  A symbolic link is followed and its target replaced
//! the same way, in the target's folder, so the link stays a link.  A character device
//! (`/dev/null`, a terminal) or a FIFO is written straight through and never replaced; `-` is
//! standard output.  Folders, sockets and block devices are refused.

use crate::guard::Temporary;
use std::fs::{File, OpenOptions};
use std::io::Write;
use std::os::unix::fs::{FileTypeExt, OpenOptionsExt, PermissionsExt};
use std::path::{Path, PathBuf};

/// The path that means standard output.
pub const STDOUT: &str = "-";

/// Whether `path` names standard output (`-`).
pub fn is_stdout(path: &Path) -> bool {
    path.as_os_str() == STDOUT
}

/// Where a report goes once links are followed.
#[derive(Debug, PartialEq, Eq)]
enum Target {
    /// Standard output.
    Stdout,
    /// A regular file, existing or not, replaced atomically.
    Regular(PathBuf),
    /// A character device or FIFO, written in place.
    Stream(PathBuf),
}

/// Links followed before giving up (the kernel's own limit for path resolution is 40).
const MAX_LINKS: usize = 40;

/// Follows symbolic links (dangling ones too: their target is where the file is created) and
/// classifies what is at the end.
fn resolve(path: &Path) -> Result<Target, String> {
    if is_stdout(path) {
        return Ok(Target::Stdout);
    }
    let shown = path.display();
    let mut current = path.to_path_buf();
    for _ in 0..MAX_LINKS {
        let meta = match std::fs::symlink_metadata(&current) {
            Ok(m) => m,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                return Ok(Target::Regular(current))
            }
            Err(e) => return Err(format!("cannot write {shown}: {e}")),
        };
        let kind = meta.file_type();
        if kind.is_symlink() {
            let to =
                std::fs::read_link(&current).map_err(|e| format!("cannot write {shown}: {e}"))?;
            current = match current.parent() {
                Some(dir) if to.is_relative() => dir.join(to),
                _ => to,
            };
            continue;
        }
        return if kind.is_file() {
            Ok(Target::Regular(current))
        } else if kind.is_char_device() || kind.is_fifo() {
            Ok(Target::Stream(current))
        } else if kind.is_dir() {
            Err(format!("{shown}: is a folder, not a file"))
        } else if kind.is_block_device() {
            Err(format!(
                "{shown}: is a block device; refusing to write a report onto it"
            ))
        } else {
            Err(format!("{shown}: is a socket, not a file"))
        };
    }
    Err(format!("{shown}: too many levels of symbolic links"))
}

fn temporary(path: &Path, attempt: u32) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let suffix = if attempt == 0 {
        String::new()
    } else {
        format!(".{attempt}")
    };
    path.with_file_name(format!(".{name}.{}{suffix}.tmp", std::process::id()))
}

/// Creates a fresh temporary file beside `path` (never opening an existing one, so a link
/// planted at the temporary name is not followed), registered for deletion on a signal.
fn create_temporary(path: &Path) -> std::io::Result<(PathBuf, File, Temporary)> {
    let mut last = None;
    for attempt in 0..16 {
        let tmp = temporary(path, attempt);
        let guard = Temporary::new(&tmp);
        match OpenOptions::new().write(true).create_new(true).open(&tmp) {
            Ok(f) => return Ok((tmp, f, guard)),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => last = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last.unwrap_or_else(|| std::io::Error::other("no temporary name left")))
}

/// Fails unless a report can be written at `path`: for a regular file, a file can be created
/// in its folder (a temporary one, removed at once, so the report itself is never touched);
/// for a device or FIFO, it is writable (it is not opened: opening a FIFO would wake its
/// reader).
pub fn check_writable(path: &Path) -> Result<(), String> {
    let shown = path.display();
    match resolve(path)? {
        Target::Stdout => Ok(()),
        Target::Stream(target) => {
            use std::os::unix::ffi::OsStrExt;
            let c = std::ffi::CString::new(target.as_os_str().as_bytes())
                .map_err(|_| format!("cannot write {shown}: the path holds a NUL byte"))?;
            // SAFETY: access only reads the NUL-terminated path.
            if unsafe { libc::access(c.as_ptr(), libc::W_OK) } != 0 {
                let e = std::io::Error::last_os_error();
                return Err(format!("cannot write {shown}: {e}"));
            }
            Ok(())
        }
        Target::Regular(target) => {
            let (tmp, file, _guard) =
                create_temporary(&target).map_err(|e| format!("cannot write {shown}: {e}"))?;
            drop(file);
            let _ = std::fs::remove_file(&tmp);
            Ok(())
        }
    }
}

/// Checks every output path with [`check_writable`]; at most one may be `-`.  Returns whether
/// one is (then standard output carries that report, and nothing else may print there).
pub fn check_outputs(paths: &[Option<&Path>]) -> Result<bool, String> {
    let mut stdout = 0;
    for path in paths.iter().flatten() {
        check_writable(path)?;
        stdout += usize::from(is_stdout(path));
    }
    if stdout > 1 {
        return Err("only one report can go to standard output (`-`)".to_string());
    }
    Ok(stdout == 1)
}

/// Writes `text` where `path` says (see the module documentation).  A regular file is
/// written to a temporary file beside it, then renamed over it: readers see the old file or
/// the whole new one, never half of it, and an interrupted write leaves no temporary behind.
pub fn write_atomic(path: &Path, text: &str) -> Result<(), String> {
    write_atomic_with(path, |out| {
        out.write_all(text.as_bytes()).map_err(|e| e.to_string())
    })
}

/// [`write_atomic`] for content written piece by piece by `fill` (a large report streamed from
/// files rather than held as one string).
pub fn write_atomic_with(
    path: &Path,
    fill: impl FnOnce(&mut dyn Write) -> Result<(), String>,
) -> Result<(), String> {
    let shown = path.display();
    let failed = |e: String| format!("cannot write {shown}: {e}");
    match resolve(path)? {
        Target::Stdout => {
            let mut out =
                std::io::BufWriter::with_capacity(1 << 20, QuietStdout(std::io::stdout()));
            fill(&mut out)
                .and_then(|_| out.flush().map_err(|e| e.to_string()))
                .map_err(|e| format!("cannot write standard output: {e}"))
        }
        Target::Stream(target) => {
            let f = open_through(&target).map_err(|e| failed(e.to_string()))?;
            let mut out = std::io::BufWriter::with_capacity(1 << 20, f);
            fill(&mut out)
                .and_then(|_| out.flush().map_err(|e| e.to_string()))
                .map_err(failed)
        }
        Target::Regular(target) => replace(&target, fill).map_err(failed),
    }
}

/// Puts a finished temporary file `tmp` (written beside `path`) in place at `path`, as
/// [`write_atomic`] would: renamed over a regular file (a link's target included), copied into
/// a device, FIFO or standard output; `tmp` is gone afterwards either way.
pub fn place(tmp: &Path, path: &Path) -> Result<(), String> {
    let result = match resolve(path) {
        Ok(Target::Regular(target)) if std::fs::rename(tmp, &target).is_ok() => Ok(()),
        Ok(_) => write_atomic_with(path, |out| {
            let mut file = std::fs::File::open(tmp).map_err(|e| e.to_string())?;
            std::io::copy(&mut file, out)
                .map(|_| ())
                .map_err(|e| e.to_string())
        }),
        Err(e) => Err(e),
    };
    let _ = std::fs::remove_file(tmp);
    result
}

/// Standard output, with a closed pipe (`… --json - | head`) taken as the reader's choice.
struct QuietStdout(std::io::Stdout);

impl Write for QuietStdout {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        match self.0.write(buf) {
            Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(buf.len()),
            other => other,
        }
    }
    fn flush(&mut self) -> std::io::Result<()> {
        match self.0.flush() {
            Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
            other => other,
        }
    }
}

/// How long a FIFO may go without a reader before writing to it is an error.
const FIFO_WAIT: std::time::Duration = std::time::Duration::from_secs(10);

/// Opens a device or FIFO for writing as it is.  A FIFO nobody reads is an error after
/// [`FIFO_WAIT`], not a wait forever: it is opened without blocking, retried while no reader
/// has it open.
fn open_through(target: &Path) -> std::io::Result<File> {
    let deadline = std::time::Instant::now() + FIFO_WAIT;
    let f = loop {
        match OpenOptions::new()
            .write(true)
            .custom_flags(libc::O_NONBLOCK | libc::O_NOCTTY)
            .open(target)
        {
            Ok(f) => break f,
            Err(e) if e.raw_os_error() == Some(libc::ENXIO) => {
                if std::time::Instant::now() > deadline {
                    return Err(std::io::Error::other(format!(
                        "no process opened this FIFO for reading within {} s",
                        FIFO_WAIT.as_secs()
                    )));
                }
                std::thread::sleep(std::time::Duration::from_millis(20));
            }
            Err(e) => return Err(e),
        }
    };
    // Blocking writes from here on: a reader that is slower than us is not an error.
    // SAFETY: F_GETFL/F_SETFL on a descriptor we own.
    unsafe {
        use std::os::fd::AsRawFd;
        let fd = f.as_raw_fd();
        let flags = libc::fcntl(fd, libc::F_GETFL);
        if flags >= 0 {
            libc::fcntl(fd, libc::F_SETFL, flags & !libc::O_NONBLOCK);
        }
    }
    Ok(f)
}

/// Atomic replacement of a regular file (or creation of a new one) with what `fill` writes; an
/// existing file keeps its permission bits.
fn replace(
    target: &Path,
    fill: impl FnOnce(&mut dyn Write) -> Result<(), String>,
) -> Result<(), String> {
    let (tmp, file, _guard) = create_temporary(target).map_err(|e| e.to_string())?;
    let result = (|| {
        if let Ok(meta) = std::fs::metadata(target) {
            file.set_permissions(std::fs::Permissions::from_mode(
                meta.permissions().mode() & 0o7777,
            ))
            .map_err(|e| e.to_string())?;
        }
        let mut out = std::io::BufWriter::with_capacity(1 << 20, file);
        fill(&mut out)?;
        let file = out.into_inner().map_err(|e| e.to_string())?;
        file.sync_all().map_err(|e| e.to_string())?;
        drop(file);
        std::fs::rename(&tmp, target).map_err(|e| e.to_string())
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dir(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("ulpgauge-write-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&d);
        std::fs::create_dir_all(&d).unwrap();
        d
    }

    #[test]
    fn links_are_followed_to_their_target_even_when_dangling() {
        let d = dir("links");
        let target = d.join("sub").join("report.json");
        std::fs::create_dir_all(target.parent().unwrap()).unwrap();
        std::os::unix::fs::symlink("sub/report.json", d.join("link")).unwrap();
        std::os::unix::fs::symlink(d.join("link"), d.join("link2")).unwrap();
        assert_eq!(
            resolve(&d.join("link2")).unwrap(),
            Target::Regular(d.join("sub/report.json"))
        );
        // A loop of links is an error, not a hang (POSIX ELOOP behaviour: common practice).
        std::os::unix::fs::symlink(d.join("b"), d.join("a")).unwrap();
        std::os::unix::fs::symlink(d.join("a"), d.join("b")).unwrap();
        assert!(resolve(&d.join("a"))
            .unwrap_err()
            .contains("symbolic links"));
        let _ = std::fs::remove_dir_all(&d);
    }

    #[test]
    fn stdout_and_folders_are_told_apart() {
        assert_eq!(resolve(Path::new("-")).unwrap(), Target::Stdout);
        let d = dir("folder");
        assert!(resolve(&d).unwrap_err().contains("is a folder"));
        let _ = std::fs::remove_dir_all(&d);
    }
}
