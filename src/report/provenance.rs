//! Where a report comes from: versions, the library, the machine, the date, the sweep.

use super::BitsValue;
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};
use std::path::Path;

/// The library under test.
#[derive(Clone, Debug, Serialize)]
pub struct LibraryInfo {
    /// Path as given.
    pub path: String,
    /// SHA-256 of the file, hex.
    pub sha256: Option<String>,
    /// The compiler strings of the ELF `.comment` section.
    pub compiler: Option<String>,
}

/// The machine.
#[derive(Clone, Debug, Serialize)]
pub struct CpuInfo {
    /// Model name from /proc/cpuinfo.
    pub model: Option<String>,
    /// Feature flags from /proc/cpuinfo.
    pub features: Vec<String>,
}

/// Provenance of a report.
#[derive(Clone, Debug, Serialize)]
pub struct Provenance {
    /// ulpgauge's version.
    pub ulpgauge: &'static str,
    /// MPFR's version (run time).
    pub mpfr: String,
    /// GMP's version (the bundled build).
    pub gmp: String,
    /// The library under test (`null` for in-process kernels).
    pub library: Option<LibraryInfo>,
    /// The machine.
    pub cpu: CpuInfo,
    /// UTC date and time of the run, ISO 8601.
    pub date: String,
    /// The sweep: kinds, coverage and points (the same as the report's `sweep`).
    pub sweep: serde_json::Value,
    /// The reported extremes recomputed with MPFR alone.
    pub reference_check: Confirmation,
}

/// MPFR's version string, from the library actually linked.
pub fn mpfr_version() -> String {
    // SAFETY: mpfr_get_version returns a pointer to a static NUL-terminated string.
    unsafe { std::ffi::CStr::from_ptr(gmp_mpfr_sys::mpfr::get_version()) }
        .to_string_lossy()
        .into_owned()
}

/// GMP's version, from the headers gmp-mpfr-sys built against.
pub fn gmp_version() -> String {
    use gmp_mpfr_sys::gmp;
    format!(
        "{}.{}.{}",
        gmp::VERSION,
        gmp::VERSION_MINOR,
        gmp::VERSION_PATCHLEVEL
    )
}

/// Facts about the library file (missing facts are `null`, never an error).
pub fn library_info(path: &Path) -> LibraryInfo {
    let bytes = std::fs::read(path).ok();
    let sha256 = bytes.as_ref().map(|b| {
        Sha256::digest(b)
            .iter()
            .map(|x| format!("{x:02x}"))
            .collect::<String>()
    });
    let compiler = bytes.as_deref().and_then(elf_comment);
    LibraryInfo {
        path: path.display().to_string(),
        sha256,
        compiler,
    }
}

/// The NUL-separated strings of the `.comment` section, joined with "; ".
fn elf_comment(bytes: &[u8]) -> Option<String> {
    use object::{Object, ObjectSection};
    let file = object::File::parse(bytes).ok()?;
    let data = file.section_by_name(".comment")?.data().ok()?;
    let mut strings: Vec<String> = data
        .split(|&b| b == 0)
        .filter(|s| !s.is_empty())
        .map(|s| String::from_utf8_lossy(s).into_owned())
        .collect();
    strings.dedup();
    (!strings.is_empty()).then(|| strings.join("; "))
}

/// Model and flags of the first processor in /proc/cpuinfo.
pub fn cpu_info() -> CpuInfo {
    let text = std::fs::read_to_string("/proc/cpuinfo").unwrap_or_default();
    let field = |name: &str| {
        text.lines()
            .find(|l| l.split(':').next().is_some_and(|k| k.trim() == name))
            .and_then(|l| l.split_once(':'))
            .map(|(_, v)| v.trim().to_string())
    };
    CpuInfo {
        model: field("model name"),
        features: field("flags")
            .or_else(|| field("Features"))
            .map(|f| f.split_whitespace().map(String::from).collect())
            .unwrap_or_default(),
    }
}

/// Now in UTC as `YYYY-MM-DDTHH:MM:SSZ`.
pub fn utc_now() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    let (days, rem) = (secs.div_euclid(86400), secs.rem_euclid(86400));
    // Civil date from days since 1970-01-01 (H. Hinnant's days_from_civil inverse, public domain).
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = doy - (153 * mp + 2) / 5 + 1;
    let month = if mp < 10 { mp + 3 } else { mp - 9 };
    let year = yoe + era * 400 + (month <= 2) as i64;
    format!(
        "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

/// The outcome, kept in `provenance.reference_check`.
#[derive(Clone, Debug, Default, Serialize, Deserialize)]
pub struct Confirmation {
    /// Extremes recomputed with MPFR alone (0 with `--reference mpfr`: MPFR made them all).
    pub confirmed_with_mpfr: u64,
    /// Inputs where the two disagreed (a bug of the fast path: the verdict fails).
    pub disagreements: Vec<BitsValue>,
}

impl Confirmation {
    /// Joins the confirmations of the shards of one check.
    pub fn merge(&mut self, other: Confirmation) {
        self.confirmed_with_mpfr += other.confirmed_with_mpfr;
        self.disagreements.extend(other.disagreements);
    }
}
