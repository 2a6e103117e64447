//! CSV reports: one `binade` row per binade of the input; with a listing limit, one `point`
//! row per point whose error exceeds it. A manifest run puts every kernel in one file, told
//! apart by the first columns.

use super::{CheckReport, ReportFormat};

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

impl ReportFormat for Csv {
    fn name(&self) -> &'static str {
        "csv"
    }
    fn render(&self, reports: &[CheckReport], _manifest: bool) -> Result<String, String> {
        let mut w = csv::Writer::from_writer(Vec::new());
        let err = |e: csv::Error| e.to_string();
        w.write_record(HEADER).map_err(err)?;
        for r in reports {
            let symbol = r.kernel.symbol.clone().unwrap_or_default();
            let lead = [
                r.function.clone(),
                r.format.to_string(),
                r.role.clone(),
                symbol,
            ];
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
            for p in &r.accuracy.figures.over_limit {
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
                w.write_record(&rec).map_err(err)?;
            }
        }
        let bytes = w.into_inner().map_err(|e| e.to_string())?;
        String::from_utf8(bytes).map_err(|e| e.to_string())
    }
}
