//! Findings streamed to files as they are found, so that none is held in memory: the
//! `--findings` file (every non-finite run and every point over `--csv-points-over`, for every
//! kernel) and, per kernel, the spool of the CSV report's `point` rows. Each is written beside
//! its target and renamed into place only when the whole run succeeded: a failed run leaves
//! no partial file.

use super::csv::point_record;
use super::{write_atomic_with, CheckReport, Csv};
use crate::measure::{FindingSink, NonFiniteRun, Worst};
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

/// Columns of the `--findings` file.
const HEADER: [&str; 17] = [
    "function",
    "format",
    "role",
    "symbol",
    "kind",
    "first_bits",
    "first_value",
    "last_bits",
    "last_value",
    "inputs",
    "kernel",
    "reference",
    "exact_ends",
    "interior",
    "output_bits",
    "reference_bits",
    "ulp",
];

/// A CSV file being written under a temporary name.
struct Spool {
    tmp: PathBuf,
    writer: csv::Writer<BufWriter<File>>,
    rows: u64,
}

impl Spool {
    fn create(tmp: PathBuf) -> Result<Spool, String> {
        let file =
            File::create(&tmp).map_err(|e| format!("cannot write {}: {e}", tmp.display()))?;
        Ok(Spool {
            tmp,
            writer: csv::Writer::from_writer(BufWriter::with_capacity(1 << 20, file)),
            rows: 0,
        })
    }
    fn row(&mut self, record: &[String]) -> Result<(), String> {
        self.rows += 1;
        self.writer
            .write_record(record)
            .map_err(|e| format!("cannot write {}: {e}", self.tmp.display()))
    }
    /// Flushes and closes the file, leaving it under its temporary name.
    fn close(self) -> Result<PathBuf, String> {
        let tmp = self.tmp.clone();
        let mut inner = self
            .writer
            .into_inner()
            .map_err(|e| format!("cannot write {}: {e}", tmp.display()))?;
        inner
            .flush()
            .map_err(|e| format!("cannot write {}: {e}", tmp.display()))?;
        Ok(tmp)
    }
}

/// A temporary name beside `path` for the `tag` part of this process's output.
fn beside(path: &Path, tag: &str) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    path.with_file_name(format!(".{name}.{}.{tag}.tmp", std::process::id()))
}

/// Streams findings to the `--findings` file and the CSV report's point spools.
pub struct FindingsWriter {
    /// function, format, role, symbol of the kernel being checked.
    lead: [String; 4],
    /// The `--findings` file and its target.
    all: Option<(Spool, PathBuf)>,
    /// The CSV report, when it lists points.
    csv: Option<PathBuf>,
    /// The point spool of each kernel begun, in order (the last one still open).
    spools: Vec<PathBuf>,
    open: Option<Spool>,
    /// The first write error; reported at the end, the check goes on.
    error: Option<String>,
}

impl FindingsWriter {
    /// A writer for `--findings FILE` (if any) and the point rows of the CSV report `csv`
    /// (if it lists points).
    pub fn new(findings: Option<&Path>, csv: Option<&Path>) -> Result<FindingsWriter, String> {
        let all = match findings {
            Some(path) => {
                let mut spool = Spool::create(beside(path, "findings"))?;
                spool.row(&HEADER.map(String::from))?;
                spool.rows = 0;
                Some((spool, path.to_path_buf()))
            }
            None => None,
        };
        Ok(FindingsWriter {
            lead: Default::default(),
            all,
            csv: csv.map(Path::to_path_buf),
            spools: Vec::new(),
            open: None,
            error: None,
        })
    }

    /// Starts the findings of the next kernel: function, format, role and symbol.
    pub fn begin(&mut self, lead: [String; 4]) {
        self.lead = lead;
        self.close_spool();
        if let Some(csv) = &self.csv {
            let tmp = beside(csv, &format!("points{}", self.spools.len()));
            match Spool::create(tmp) {
                Ok(spool) => self.open = Some(spool),
                Err(e) => self.fail(e),
            }
        }
    }

    fn close_spool(&mut self) {
        if let Some(spool) = self.open.take() {
            match spool.close() {
                Ok(path) => self.spools.push(path),
                Err(e) => self.fail(e),
            }
        }
    }

    fn fail(&mut self, e: String) {
        self.error.get_or_insert(e);
    }

    /// Rows written to the `--findings` file so far (runs and points).
    pub fn findings_rows(&self) -> u64 {
        self.all.as_ref().map_or(0, |(s, _)| s.rows)
    }

    /// Writes the CSV report (each kernel's binade rows, then its streamed point rows) and
    /// puts the `--findings` file in place.
    pub fn finish(mut self, reports: &[CheckReport]) -> Result<(), String> {
        self.close_spool();
        if let Some(e) = self.error.take() {
            return Err(e);
        }
        if let Some(csv) = self.csv.take() {
            let spools = std::mem::take(&mut self.spools);
            let result = write_atomic_with(&csv, |out| {
                for (i, r) in reports.iter().enumerate() {
                    out.write_all(Csv.binade_rows(r, i == 0)?.as_bytes())
                        .map_err(|e| e.to_string())?;
                    if let Some(spool) = spools.get(i) {
                        let mut file = File::open(spool).map_err(|e| e.to_string())?;
                        std::io::copy(&mut file, out).map_err(|e| e.to_string())?;
                    }
                }
                Ok(())
            });
            for spool in &spools {
                let _ = std::fs::remove_file(spool);
            }
            result?;
        }
        if let Some((spool, target)) = self.all.take() {
            let tmp = spool.close()?;
            std::fs::rename(&tmp, &target).map_err(|e| {
                let _ = std::fs::remove_file(&tmp);
                format!("cannot write {}: {e}", target.display())
            })?;
        }
        Ok(())
    }
}

impl Drop for FindingsWriter {
    /// A run that did not finish leaves none of its temporary files behind.
    fn drop(&mut self) {
        if let Some(spool) = self.open.take() {
            let _ = std::fs::remove_file(&spool.tmp);
        }
        if let Some((spool, _)) = self.all.take() {
            let _ = std::fs::remove_file(&spool.tmp);
        }
        for spool in &self.spools {
            let _ = std::fs::remove_file(spool);
        }
    }
}

fn text(v: &serde_json::Value) -> String {
    match v {
        serde_json::Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

impl FindingSink for FindingsWriter {
    fn run(&mut self, run: &NonFiniteRun) {
        if let Some((spool, _)) = &mut self.all {
            let mut rec = self.lead.to_vec();
            rec.extend([
                "run".into(),
                run.first.bits.clone(),
                text(&run.first.value),
                run.last.bits.clone(),
                text(&run.last.value),
                run.count.to_string(),
                run.kernel.into(),
                run.reference.into(),
                run.exact_ends.to_string(),
                run.interior.into(),
                String::new(),
                String::new(),
                String::new(),
            ]);
            if let Err(e) = spool.row(&rec) {
                self.fail(e);
            }
        }
    }

    fn point(&mut self, p: &Worst) {
        if let Some((spool, _)) = &mut self.all {
            let mut rec = self.lead.to_vec();
            rec.extend([
                "point".into(),
                p.input.bits.clone(),
                text(&p.input.value),
                p.input.bits.clone(),
                text(&p.input.value),
                "1".into(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                p.output.bits.clone(),
                p.reference.bits.clone(),
                format!("{:?}", p.ulp),
            ]);
            if let Err(e) = spool.row(&rec) {
                self.fail(e);
            }
        }
        if let Some(spool) = &mut self.open {
            if let Err(e) = spool.row(&point_record(&self.lead, p)) {
                self.fail(e);
            }
        }
    }
}
