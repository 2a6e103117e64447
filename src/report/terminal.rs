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
        None => r
            .kernel
            .symbol
            .clone()
            .unwrap_or_else(|| "in-process kernel".into()),
    };
    let coverage = match r.accuracy.coverage {
        crate::sweep::Coverage::Exhaustive => "exhaustive",
        crate::sweep::Coverage::Sampled => "sampled",
    };
    writeln!(out, "{} {} {} — {symbol}", r.function, r.role, r.format)?;
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
    if r.non_finite.is_empty() {
        writeln!(out, "  non-finite  none")?;
    }
    for run in r.non_finite.iter().take(8) {
        writeln!(
            out,
            "  non-finite  {} .. {}: kernel {}, reference {} ({} inputs)",
            v(&run.first),
            v(&run.last),
            run.kernel,
            run.reference,
            run.count
        )?;
    }
    if r.non_finite.len() > 8 {
        writeln!(
            out,
            "  non-finite  … {} runs in all (see the JSON report)",
            r.non_finite.len()
        )?;
    }
    for t in &r.thresholds {
        let show =
            |b: &Option<super::BitsValue>| b.as_ref().map(v).unwrap_or_else(|| "never".into());
        writeln!(
            out,
            "  threshold   {:?} ({}) to {}: reference {}, kernel {}",
            t.kind,
            t.side,
            v(&t.asymptote),
            show(&t.reference),
            show(&t.kernel)
        )?;
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
    writeln!(
        out,
        "  checks      {passed}/{} special-value rules, {}/{} hygiene checks passed",
        r.special_values.len(),
        r.hygiene.iter().filter(|h| h.passed).count(),
        r.hygiene.len()
    )?;
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
