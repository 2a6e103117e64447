//! The report of one quantized kernel: JSON (schema `ulpgauge-quant/1`), the terminal summary
//! (one screen whatever the findings) and the CSV of the 256 codes.
//!
//! JSON keys: `schema`; `function`, `format` ("i8" | "u8"), `role`, `params` (name → exact
//! decimal as given); `quantization`: {input_scale, input_zero_point, output_scale,
//! output_zero_point} (scales as the exact decimals given); `kernel`: {library, symbol};
//! `coverage`: {kind: "exhaustive", inputs: 256}; `accuracy`: {outputs, correctly_rounded,
//! correctly_rounded_fraction, max_steps, worst: miss | null, mean_steps, off_by_one,
//! off_by_two, off_by_more, ties, ties_away_only, rounding: {…as in `ulpgauge-check/2`}};
//! `misses`: [{q, x, output, expected, ties_away, t, off_by, steps}] — every code whose output
//! is not the correctly rounded code, smallest q first (at most 256); `crashes`: [{q, signal}];
//! `verdict`: {passed, exit_code, limit: {kind: "correctly-rounded" | "max-steps", steps},
//! failed: [sentence]}. Steps are |ŷ − clamp(t)|, t = f(x)/S_out + Z_out exactly, clamped to
//! the type's range, so a correctly saturated code is at most half a step off.

use super::measure::{round6, Limit, Measures};
use super::reference::Expected;
use super::spec::QuantSpec;
use serde_json::json;

/// Everything measured of one quantized kernel.
#[derive(Clone, Debug)]
pub struct QuantReport {
    /// Catalog function.
    pub function: String,
    /// "forward" or "derivative".
    pub role: String,
    /// Parameters as (name, exact decimal) given.
    pub params: Vec<(String, String)>,
    /// Scales and zero points.
    pub spec: QuantSpec,
    /// Library and symbol.
    pub library: String,
    /// Symbol.
    pub symbol: String,
    /// The 256 expected outputs.
    pub expected: Vec<Expected>,
    /// The kernel's 256 codes (`None` where it crashed or hung).
    pub outputs: Vec<Option<i32>>,
    /// The figures.
    pub measures: Measures,
    /// Codes the kernel crashed or hung on, with the signal.
    pub crashes: Vec<(i32, String)>,
    /// The verdict's rule.
    pub limit: Limit,
}

/// Listed misses on the terminal; the JSON and CSV hold them all.
const SHOWN_MISSES: usize = 8;

impl QuantReport {
    /// 0 passed, 1 a finding failed, 3 the kernel crashed or hung.
    pub fn exit_code(&self) -> i32 {
        if !self.crashes.is_empty() {
            3
        } else if self.failures().is_empty() {
            0
        } else {
            1
        }
    }

    /// The verdict's failed lines.
    pub fn failures(&self) -> Vec<String> {
        let mut failed = self.measures.failures(self.limit, self.spec.ty.name());
        if let Some((q, signal)) = self.crashes.first() {
            failed.push(format!(
                "the kernel failed ({signal}) at q = {q}{}",
                if self.crashes.len() > 1 {
                    format!(" and {} other codes", self.crashes.len() - 1)
                } else {
                    String::new()
                }
            ));
        }
        failed
    }

    /// The JSON object.
    pub fn to_json(&self) -> serde_json::Value {
        let s = &self.spec;
        let params: serde_json::Map<String, serde_json::Value> = self
            .params
            .iter()
            .map(|(n, v)| (n.clone(), json!(v)))
            .collect();
        let m = &self.measures;
        json!({
            "schema": "ulpgauge-quant/1",
            "function": self.function,
            "format": s.ty.name(),
            "role": self.role,
            "params": params,
            "quantization": {
                "input_scale": s.input_scale_text,
                "input_zero_point": s.input_zero_point,
                "output_scale": s.output_scale_text,
                "output_zero_point": s.output_zero_point,
            },
            "kernel": {"library": self.library, "symbol": self.symbol},
            "coverage": {"kind": "exhaustive", "inputs": 256},
            "accuracy": {
                "outputs": m.outputs,
                "correctly_rounded": m.correctly_rounded,
                "correctly_rounded_fraction": m.correctly_rounded_fraction,
                "max_steps": m.max_steps,
                "worst": m.worst,
                "mean_steps": m.mean_steps,
                "off_by_one": m.off_by_one,
                "off_by_two": m.off_by_two,
                "off_by_more": m.off_by_more,
                "ties": m.ties,
                "ties_away_only": m.ties_away_only,
                "rounding": m.rounding,
            },
            "misses": m.misses,
            "crashes": self.crashes.iter().map(|(q, sig)| json!({"q": q, "signal": sig})).collect::<Vec<_>>(),
            "verdict": {
                "passed": self.exit_code() == 0,
                "exit_code": self.exit_code(),
                "limit": self.limit,
                "failed": self.failures(),
            },
        })
    }

    /// The terminal summary: at most about 20 lines.
    pub fn terminal(&self) -> String {
        let s = &self.spec;
        let m = &self.measures;
        let mut out = String::new();
        let mut line = |l: String| {
            out.push_str(&l);
            out.push('\n');
        };
        line(format!(
            "{} {} {} ({}), {}",
            self.symbol,
            self.function,
            s.ty.name(),
            self.role,
            self.library
        ));
        line(format!(
            "  quantization: x = {}·{}, y = f(x)/{}{}; exhaustive: all 256 codes",
            s.input_scale_text,
            match s.input_zero_point {
                0 => "q".to_string(),
                z => format!("(q {})", signed(-z)),
            },
            s.output_scale_text,
            match s.output_zero_point {
                0 => String::new(),
                z => format!(" {}", signed(z)),
            }
        ));
        line(format!(
            "  correctly rounded (ties to even): {} of {} ({:.1}%); max error {} steps, mean {}",
            m.correctly_rounded,
            m.outputs,
            100.0 * m.correctly_rounded_fraction,
            round6(m.max_steps),
            round6(m.mean_steps)
        ));
        // A code one step from RN(t) on t's own side is no rounding of t, so the diagnosis
        // below counts fewer points than "off by one" when such codes exist.
        let beyond = u64::from(m.off_by_one).saturating_sub(m.rounding.counts.other_neighbour);
        let beyond_text = match beyond {
            0 => String::new(),
            n => format!(" ({n} of them beyond t's two neighbouring codes)"),
        };
        line(format!(
            "  off by one step: {}{beyond_text}, by two: {}, by more: {}; exact ties: {}, outputs that round ties away instead: {}",
            m.off_by_one, m.off_by_two, m.off_by_more, m.ties, m.ties_away_only
        ));
        if let Some(message) = &m.rounding.message {
            line(format!("  {message}"));
        }
        if !m.misses.is_empty() {
            line(format!(
                "  {:>5} {:>14} {:>6} {:>8} {:>14}",
                "q", "x", "output", "expected", "exact"
            ));
            for miss in m.misses.iter().take(SHOWN_MISSES) {
                line(format!(
                    "  {:>5} {:>14} {:>6} {:>8} {:>14}",
                    miss.q,
                    short(miss.x),
                    miss.output,
                    miss.expected,
                    short(miss.t)
                ));
            }
            if m.misses.len() > SHOWN_MISSES {
                line(format!(
                    "  … and {} more (every one in the JSON and CSV reports)",
                    m.misses.len() - SHOWN_MISSES
                ));
            }
        }
        let failures = self.failures();
        if failures.is_empty() {
            line("  verdict: passed".to_string());
        } else {
            for f in failures {
                line(format!("  FAILED: {f}"));
            }
        }
        out
    }

    /// The CSV rows of the 256 codes (no header).
    pub fn csv_rows(&self, out: &mut String) {
        for (e, o) in self.expected.iter().zip(&self.outputs) {
            let (output, off, steps) = match o {
                Some(v) => (
                    v.to_string(),
                    (v - e.nearest_even).to_string(),
                    format!("{}", (f64::from(*v) - e.t_clamped).abs()),
                ),
                None => (String::new(), String::new(), String::new()),
            };
            out.push_str(&format!(
                "{},{},{},{},{},{},{},{},{},{},{},{},{}\n",
                self.symbol,
                self.function,
                self.spec.ty.name(),
                self.role,
                e.q,
                e.x,
                e.t,
                e.t_exact.as_ref().map_or(String::new(), |t| t.to_string()),
                e.nearest_even,
                e.ties_away,
                output,
                off,
                steps
            ));
        }
    }
}

/// The CSV header of [`QuantReport::csv_rows`]: x and t_exact are exact rationals (`p/q`).
pub const CSV_HEADER: &str =
    "symbol,function,format,role,q,x,t,t_exact,expected,ties_away,output,off_by,steps\n";

/// A number for the terminal: the shortest round-trip decimal, or 6 decimals when longer.
fn short(v: f64) -> String {
    let full = format!("{v}");
    if full.len() <= 12 {
        full
    } else {
        format!("{v:.6}")
    }
}

/// "+ 3" or "− 3" after a term.
fn signed(v: i32) -> String {
    if v < 0 {
        format!("− {}", v.unsigned_abs())
    } else {
        format!("+ {v}")
    }
}

/// The JSON document of several reports: one object, or `{"kernels": [...]}` for a manifest.
pub fn json_document(reports: &[QuantReport], manifest: bool) -> String {
    let value = if manifest {
        json!({"kernels": reports.iter().map(QuantReport::to_json).collect::<Vec<_>>()})
    } else {
        reports[0].to_json()
    };
    let mut text = serde_json::to_string_pretty(&value).expect("serializable");
    text.push('\n');
    text
}

/// The CSV document of several reports.
pub fn csv_document(reports: &[QuantReport]) -> String {
    let mut out = CSV_HEADER.to_string();
    for r in reports {
        r.csv_rows(&mut out);
    }
    out
}
