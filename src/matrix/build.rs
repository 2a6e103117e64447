//! Building the kernels once per compiler and flags, with the project's build script.

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

/// One `--build "CC FLAGS…"`.
#[derive(Clone, Debug, serde::Serialize)]
pub struct Build {
    /// As given ("gcc -O3 -ffast-math").
    pub label: String,
    /// The compiler (first word).
    pub cc: String,
    /// The flags (the rest).
    pub cflags: String,
    /// Output folder of the build.
    pub dir: PathBuf,
}

/// How a build went.
#[derive(Clone, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum BuildStatus {
    /// Built; its kernels were checked.
    Built,
    /// The compiler is not installed; skipped with a note.
    Skipped,
    /// The build script failed.
    Failed,
}

/// Parses `--build` values; labels must be distinct and name a compiler.
pub fn parse(values: &[String], work: &Path) -> Result<Vec<Build>, String> {
    let mut builds: Vec<Build> = Vec::new();
    for v in values {
        let words: Vec<&str> = v.split_whitespace().collect();
        let Some((cc, flags)) = words.split_first() else {
            return Err("--build '' names no compiler (e.g. --build \"gcc -O2\")".into());
        };
        let label = words.join(" ");
        if builds.iter().any(|b| b.label == label) {
            return Err(format!("--build '{label}' is given twice"));
        }
        let slug: String = label
            .chars()
            .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
            .collect();
        builds.push(Build {
            label,
            cc: cc.to_string(),
            cflags: flags.join(" "),
            dir: work.join(format!("{}-{slug}", builds.len() + 1)),
        });
    }
    if builds.is_empty() {
        return Err("give at least one --build \"CC FLAGS\" (e.g. --build \"gcc -O2\")".into());
    }
    Ok(builds)
}

/// Whether a command can be found (a path, or a name on PATH).
pub fn available(cc: &str) -> bool {
    if cc.contains('/') {
        return Path::new(cc).is_file();
    }
    std::env::var_os("PATH")
        .map(|paths| std::env::split_paths(&paths).any(|d| d.join(cc).is_file()))
        .unwrap_or(false)
}

/// Tries to install a missing compiler with apt-get (only when asked to).
pub fn install(cc: &str) -> Result<(), String> {
    let status = Command::new("apt-get")
        .args(["install", "-y", "--no-install-recommends", cc])
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .map_err(|e| format!("apt-get: {e}"))?;
    if status.success() && available(cc) {
        Ok(())
    } else {
        Err(format!("apt-get install {cc} did not succeed"))
    }
}

/// Runs `bash SCRIPT DIR` with CC and CFLAGS set; the error holds the script's last lines.
pub fn run_script(script: &Path, build: &Build) -> Result<(), String> {
    let out = Command::new("bash")
        .arg(script)
        .arg(&build.dir)
        .env("CC", &build.cc)
        .env("CFLAGS", &build.cflags)
        .stdin(Stdio::null())
        .output()
        .map_err(|e| format!("cannot run {}: {e}", script.display()))?;
    if out.status.success() {
        return Ok(());
    }
    let err = String::from_utf8_lossy(&out.stderr);
    let tail: Vec<&str> = err.lines().rev().take(3).collect();
    Err(format!(
        "{} failed ({}): {}",
        script.display(),
        out.status,
        tail.into_iter().rev().collect::<Vec<_>>().join(" / ")
    ))
}
