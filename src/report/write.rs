//! Writing report files atomically, and checking before any work that they can be written.

use std::io::Write;
use std::path::{Path, PathBuf};

fn temporary(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    path.with_file_name(format!(".{name}.{}.tmp", std::process::id()))
}

/// Fails unless a file can be created at `path` (its folder exists and is writable); creates
/// and removes a temporary file beside it, so the report itself is never touched.
pub fn check_writable(path: &Path) -> Result<(), String> {
    if path.is_dir() {
        return Err(format!("{}: is a folder, not a file", path.display()));
    }
    let tmp = temporary(path);
    std::fs::File::create(&tmp).map_err(|e| format!("cannot write {}: {e}", path.display()))?;
    let _ = std::fs::remove_file(&tmp);
    Ok(())
}

/// Writes `text` to a temporary file beside `path`, then renames it over `path`: readers see
/// the old file or the whole new one, never half of it.
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
    let tmp = temporary(path);
    let result = std::fs::File::create(&tmp)
        .map_err(|e| e.to_string())
        .and_then(|f| {
            let mut out = std::io::BufWriter::with_capacity(1 << 20, f);
            fill(&mut out)?;
            let f = out.into_inner().map_err(|e| e.to_string())?;
            f.sync_all().map_err(|e| e.to_string())
        })
        .and_then(|_| std::fs::rename(&tmp, path).map_err(|e| e.to_string()));
    if let Err(e) = result {
        let _ = std::fs::remove_file(&tmp);
        return Err(format!("cannot write {}: {e}", path.display()));
    }
    Ok(())
}
