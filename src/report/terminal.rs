//! The terminal summary: short, readable, the findings first.

use super::{CheckReport, ReportFormat};
use std::fmt::Write;

/// The terminal output.
pub struct Terminal;

fn v(b: &super::BitsValue) -> String {
    let value = match &b.value {
        serde_json::Value::String(s) => s.clone(),
        other => other.to_string(),
    };
    format!("{value} ({})", b.bits)
}

/// Thousands separated by commas, so counts of millions read at a glance.
fn count(n: u64) -> String {
    let digits = n.to_string();
    let mut text = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            text.push(',');
        }
        text.push(c);
    }
    text
}

/// "1 input", "12,916 inputs".
fn counted(n: u64, noun: &str) -> String {
    format!("{} {noun}{}", count(n), if n == 1 { "" } else { "s" })
}

/// The non-finite findings in a few sentences: per kind, how many runs and inputs, in which
/// binades of each sign, how dense, and the longest runs; never one line per run.
fn non_finite(out: &mut String, r: &CheckReport) -> std::fmt::Result {
    let total = r.non_finite_total;
    if total.runs == 0 {
        return writeln!(out, "  non-finite  none");
    }
    writeln!(
        out,
        "  non-finite  {} in {} where kernel and reference differ in class:",
        counted(total.inputs, "input"),
        counted(total.runs, "run")
    )?;
    let per_binade = crate::format::by_name(r.input_format).map(|f| 1u64 << (f.precision() - 1));
    let mut kinds: Vec<(&str, &str)> = r
        .non_finite_summary
        .iter()
        .map(|c| (c.kernel, c.reference))
        .collect();
    kinds.sort_unstable();
    kinds.dedup();
    for (kernel, reference) in kinds {
        for sign in ['+', '-'] {
            let cells: Vec<_> = r
                .non_finite_summary
                .iter()
                .filter(|c| (c.kernel, c.reference) == (kernel, reference))
                .filter(|c| c.binade.starts_with(sign))
                .collect();
            let (Some(first), Some(last)) = (cells.first(), cells.last()) else {
                continue;
            };
            let inputs: u64 = cells.iter().map(|c| c.inputs).sum();
            let runs: u64 = cells.iter().map(|c| c.runs).sum();
            let density = per_binade.map_or(String::new(), |n| {
                format!(
                    ", {:.1}% of their inputs",
                    100.0 * inputs as f64 / (n * cells.len() as u64) as f64
                )
            });
            let binades = if cells.len() == 1 {
                format!("binade {}", first.binade)
            } else {
                format!(
                    "{} binades from {} to {}",
                    cells.len(),
                    first.binade,
                    last.binade
                )
            };
            writeln!(
                out,
                "              kernel {kernel} where the reference is {reference}: {} in {}, {binades}{density}; x from {} to {}",
                counted(inputs, "input"),
                counted(runs, "run"),
                v(&first.first),
                v(&last.last)
            )?;
        }
    }
    for run in r.non_finite.iter().take(3) {
        writeln!(out, "              longest: {}", run.message)?;
    }
    if total.runs > 3 {
        writeln!(
            out,
            "              every run is counted per binade in the JSON report (non_finite_summary); --findings FILE lists each one"
        )?;
    }
    Ok(())
}

fn summary(out: &mut String, r: &CheckReport) -> std::fmt::Result {
    let acc = &r.accuracy.figures;
    let symbol = match &r.recorded {
        Some(rec) => {
            let outputs: Vec<&str> = rec
                .files
                .iter()
                .filter(|f| f.array == "outputs")
                .map(|f| f.path.as_str())
                .collect();
            format!("recorded outputs {}", outputs.join(", "))
        }
        None => {
            let symbol = r
                .kernel
                .symbol
                .clone()
                .unwrap_or_else(|| "in-process kernel".into());
            match r.kernel.strides {
                Some([sx, sy]) => format!("{symbol} (strided, strides {sx},{sy})"),
                None => symbol,
            }
        }
    };
    let coverage = match r.accuracy.coverage {
        crate::sweep::Coverage::Exhaustive => "exhaustive",
        crate::sweep::Coverage::Sampled => "sampled",
    };
    if r.input_format == r.output_format {
        writeln!(out, "{} {} {} — {symbol}", r.function, r.role, r.format)?;
    } else {
        // Mixed formats: inputs in one, outputs (and their ulps) in the other.
        writeln!(
            out,
            "{} {} {} in, {} out (ulps of {}) — {symbol}",
            r.function, r.role, r.input_format, r.output_format, r.output_format
        )?;
    }
    writeln!(
        out,
        "  coverage    {coverage}: {} measured points ({} inputs, range {})",
        acc.points, r.sweep.inputs, r.sweep.range
    )?;
    if let Some(rec) = &r.recorded {
        writeln!(
            out,
            "  recorded    {} elements: {} distinct inputs measured, {} repeats, {} outside the range, {} inputs with differing outputs",
            rec.entries,
            rec.distinct_inputs,
            rec.repeated,
            rec.outside_range,
            rec.non_deterministic.inputs
        )?;
        let not_run: Vec<&str> = rec.not_run.iter().map(|n| n.measure).collect();
        writeln!(
            out,
            "  not run     {} (they need a callable kernel or repeated inputs; see the JSON report)",
            not_run.join(", ")
        )?;
    }
    if let Some(s) = &r.shard {
        writeln!(
            out,
            "  shard       {}/{}: figures of this part only; `ulpgauge merge` joins the parts",
            s.index, s.count
        )?;
    }
    writeln!(
        out,
        "  max error   {:.4} ulp; mean {:.4}, rms {:.4}; correctly rounded {:.2}%, faithful {:.2}%",
        acc.max_ulp,
        acc.mean_ulp,
        acc.rms_ulp,
        100.0 * acc.correctly_rounded,
        100.0 * acc.faithful
    )?;
    if let Some(m) = &acc.rounding.message {
        writeln!(out, "  rounding    {m}")?;
    }
    if let Some(w) = &acc.worst {
        writeln!(
            out,
            "  worst input {} -> {}, correctly rounded {}",
            v(&w.input),
            v(&w.output),
            v(&w.reference)
        )?;
    }
    if let Some(f) = &acc.abs_floor {
        writeln!(
            out,
            "  abs floor   {:e}: max {:.4} (raw figure above)",
            f.floor, f.max
        )?;
    }
    if acc.flush_to_zero_outputs > 0 {
        writeln!(out, "  flush-to-zero: {} subnormal results returned as zero, as flush-to-zero does (not counted in ulp figures)", acc.flush_to_zero_outputs)?;
    }
    non_finite(out, r)?;
    if let Some(n) = acc.points_over_limit {
        writeln!(
            out,
            "  listed      {n} points over the listing limit, in the CSV report (and --findings)"
        )?;
    }
    for t in &r.thresholds {
        writeln!(out, "  threshold   {}", t.message)?;
    }
    for k in &r.kinks {
        writeln!(
            out,
            "  kink        at {}: kernel uses {} one-sided value",
            v(&k.input),
            k.uses
        )?;
    }
    if let Some(s) = &r.shape {
        if s.monotonicity_violations > 0 || s.jump_count > 0 {
            writeln!(
                out,
                "  shape       {} monotonicity violations, {} jumps",
                s.monotonicity_violations, s.jump_count
            )?;
        }
    }
    if let Some(ns) = r.kernel.ns_per_element {
        writeln!(out, "  throughput  {ns:.2} ns/element")?;
    }
    if r.reference_failures.count > 0 {
        writeln!(
            out,
            "  left out    {} inputs whose reference could not be decided (first: {})",
            r.reference_failures.count,
            r.reference_failures.first_message.as_deref().unwrap_or("")
        )?;
    }
    if let Some(c) = &r.crash {
        writeln!(
            out,
            "  CRASH       {} at input {} ({} crashes)",
            c.signal,
            v(&c.input),
            c.count
        )?;
    }
    let passed = r.special_values.iter().filter(|s| s.passed).count();
    let hygiene = if r.recorded.is_some() && r.hygiene.is_empty() {
        "hygiene not run (recorded outputs)".to_string()
    } else {
        format!(
            "{}/{} hygiene checks passed",
            r.hygiene.iter().filter(|h| h.passed).count(),
            r.hygiene.len()
        )
    };
    writeln!(
        out,
        "  checks      {passed}/{} special-value rules, {hygiene}",
        r.special_values.len(),
    )?;
    if let Some(env) = &r.caller_fpenv {
        writeln!(out, "  fp env      {}", env.message)?;
    }
    if let Some(variants) = &r.variants {
        writeln!(out, "  variants    {}", variants.message)?;
    }
    for f in r.verdict.failed.iter().take(10) {
        writeln!(out, "  FAILED      {f}")?;
    }
    if r.verdict.failed.len() > 10 {
        writeln!(out, "  FAILED      … {} in all", r.verdict.failed.len())?;
    }
    Ok(())
}

impl ReportFormat for Terminal {
    fn name(&self) -> &'static str {
        "terminal"
    }
    fn render(&self, reports: &[CheckReport], _manifest: bool) -> Result<String, String> {
        let mut out = String::new();
        for r in reports {
            summary(&mut out, r).map_err(|e| e.to_string())?;
        }
        Ok(out)
    }
}
