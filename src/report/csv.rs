//! CSV reports: one `binade` row per binade of the input; with a listing limit, one `point`
//! row per point whose error exceeds it (streamed to a spool file as found and copied in
//! after the kernel's binade rows). A manifest run puts every kernel in one file, told apart
//! by the first columns.

use super::{CheckReport, ReportFormat};
use crate::measure::Worst;

/// The CSV output.
pub struct Csv;

const HEADER: [&str; 17] = [
    "function",
    "format",
    "role",
    "symbol",
    "kind",
    "binade",
    "first_bits",
    "first_value",
    "last_bits",
    "last_value",
    "points",
    "max_ulp",
    "mean_ulp",
    "correctly_rounded",
    "output_bits",
    "reference_bits",
    "ulp",
];

/// Shortest round-trip text, in exponent form outside [1e-5, 1e16) (Rust's `Debug` for f64).
fn number(v: f64) -> String {
    format!("{v:?}")
}

fn value(v: &serde_json::Value) -> String {
    match v {
        serde_json::Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

/// The first columns of every row: which kernel.
pub(crate) fn lead(r: &CheckReport) -> [String; 4] {
    [
        r.function.clone(),
        r.format.to_string(),
        r.role.clone(),
        r.kernel.symbol.clone().unwrap_or_default(),
    ]
}

/// The `point` row of a point over the listing limit.
pub(crate) fn point_record(lead: &[String; 4], p: &Worst) -> Vec<String> {
    let mut rec: Vec<String> = lead.to_vec();
    rec.extend([
        "point".into(),
        String::new(),
        p.input.bits.clone(),
        value(&p.input.value),
        String::new(),
        String::new(),
        "1".into(),
        number(p.ulp),
        String::new(),
        String::new(),
        p.output.bits.clone(),
        p.reference.bits.clone(),
        number(p.ulp),
    ]);
    rec
}

impl Csv {
    /// The header and one report's `binade` rows, as CSV text (`header`: start with the
    /// header row). A report's `point` rows follow them; they are streamed (see
    /// [`super::findings`]), never held.
    pub fn binade_rows(&self, r: &CheckReport, header: bool) -> Result<String, String> {
        let mut w = csv::Writer::from_writer(Vec::new());
        let err = |e: csv::Error| e.to_string();
        if header {
            w.write_record(HEADER).map_err(err)?;
        }
        let lead = lead(r);
        for row in &r.accuracy.figures.per_binade {
            let mut rec: Vec<String> = lead.to_vec();
            rec.extend([
                "binade".into(),
                row.binade.clone(),
                row.first.bits.clone(),
                value(&row.first.value),
                row.last.bits.clone(),
                value(&row.last.value),
                row.points.to_string(),
                number(row.max_ulp),
                number(row.mean_ulp),
                number(row.correctly_rounded),
                String::new(),
                String::new(),
                String::new(),
            ]);
            w.write_record(&rec).map_err(err)?;
        }
        let bytes = w.into_inner().map_err(|e| e.to_string())?;
        String::from_utf8(bytes).map_err(|e| e.to_string())
    }
}

impl ReportFormat for Csv {
    fn name(&self) -> &'static str {
        "csv"
    }
    fn render(&self, reports: &[CheckReport], _manifest: bool) -> Result<String, String> {
        let mut text = String::new();
        for (i, r) in reports.iter().enumerate() {
            text.push_str(&self.binade_rows(r, i == 0)?);
        }
        if reports.is_empty() {
            text = self.binade_rows_header()?;
        }
        Ok(text)
    }
}

impl Csv {
    fn binade_rows_header(&self) -> Result<String, String> {
        let mut w = csv::Writer::from_writer(Vec::new());
        w.write_record(HEADER).map_err(|e| e.to_string())?;
        let bytes = w.into_inner().map_err(|e| e.to_string())?;
        String::from_utf8(bytes).map_err(|e| e.to_string())
    }
}
