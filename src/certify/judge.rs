//! Judging a check report against the requirements of a spec.

use super::spec::{KinkSide, Requirements};
use crate::report::CheckReport;
use serde::Serialize;
use serde_json::{json, Value};

/// One requirement with its measured figure and verdict.
#[derive(Clone, Debug, Serialize)]
pub struct Judged {
    /// The spec key ("require.max_ulp", "require.range[0]").
    pub key: String,
    /// The requirement in words ("max ulp <= 1").
    pub requirement: String,
    /// The limit as the spec gives it.
    pub limit: Value,
    /// The measured figure (a number, a fraction, or counts).
    pub measured: Value,
    /// The figure as the table shows it.
    pub shown: String,
    /// Whether it is met.
    pub passed: bool,
    /// Where it fails, or what was looked at.
    pub detail: String,
}

fn fmt_ulp(x: f64) -> String {
    format!("{x:.4}")
}

fn pct(x: f64) -> String {
    format!("{:.4}%", 100.0 * x)
}

/// Judges a set of special-value rules selected by a prefix of their wording.
fn rules(report: &CheckReport, key: &str, words: &str, prefix: &str) -> Judged {
    let chosen: Vec<_> = report
        .special_values
        .iter()
        .filter(|r| r.rule.starts_with(prefix))
        .collect();
    let passed = chosen.iter().filter(|r| r.passed).count();
    let first_failure = chosen.iter().find(|r| !r.passed);
    let detail = match (chosen.is_empty(), first_failure) {
        (true, _) => "no input of this kind was probed".to_string(),
        (false, Some(r)) => format!(
            "{} at {} ({}): got {}, expected {}",
            r.rule,
            r.input.bits,
            r.input.value,
            r.output
                .as_ref()
                .map_or("nothing (crash)".to_string(), |o| format!(
                    "{} ({})",
                    o.bits, o.value
                )),
            r.expected.bits
        ),
        (false, None) => format!("{} inputs probed", chosen.len()),
    };
    Judged {
        key: key.to_string(),
        requirement: words.to_string(),
        limit: json!(true),
        measured: json!({ "passed": passed, "checked": chosen.len() }),
        shown: format!("{passed}/{} rules", chosen.len()),
        passed: !chosen.is_empty() && passed == chosen.len(),
        detail,
    }
}

/// The figure and verdict of every listed requirement; `ranges` holds one report per
/// `require.range` entry, in order.
pub fn judge(req: &Requirements, report: &CheckReport, ranges: &[CheckReport]) -> Vec<Judged> {
    let acc = &report.accuracy.figures;
    let worst = acc.worst.as_ref().map_or(String::new(), |w| {
        format!(
            "worst at x = {} ({}): {} ulp",
            w.input.value,
            w.input.bits,
            fmt_ulp(w.ulp)
        )
    });
    let no_points = acc.points == 0;
    let mut out = Vec::new();
    if let Some(limit) = req.max_ulp {
        out.push(Judged {
            key: "require.max_ulp".into(),
            requirement: format!("max ulp <= {limit}"),
            limit: json!(limit),
            measured: json!(acc.max_ulp),
            shown: fmt_ulp(acc.max_ulp),
            passed: !no_points && acc.max_ulp <= limit,
            detail: if no_points {
                "no finite points measured".into()
            } else {
                worst.clone()
            },
        });
    }
    if let Some(limit) = req.mean_ulp {
        out.push(Judged {
            key: "require.mean_ulp".into(),
            requirement: format!("mean ulp <= {limit}"),
            limit: json!(limit),
            measured: json!(acc.mean_ulp),
            shown: fmt_ulp(acc.mean_ulp),
            passed: !no_points && acc.mean_ulp <= limit,
            detail: format!("over {} points", acc.points),
        });
    }
    if let Some(limit) = req.correctly_rounded {
        out.push(Judged {
            key: "require.correctly_rounded".into(),
            requirement: format!("correctly rounded >= {}", pct(limit)),
            limit: json!(limit),
            measured: json!(acc.correctly_rounded),
            shown: pct(acc.correctly_rounded),
            passed: !no_points && acc.correctly_rounded >= limit,
            detail: format!("over {} points", acc.points),
        });
    }
    if req.faithful {
        out.push(Judged {
            key: "require.faithful".into(),
            requirement: "faithful (every point < 1 ulp)".into(),
            limit: json!(true),
            measured: json!(acc.faithful),
            shown: pct(acc.faithful),
            passed: !no_points && acc.faithful == 1.0,
            detail: worst.clone(),
        });
    }
    if req.nan_propagation {
        out.push(rules(
            report,
            "require.nan_propagation",
            "NaN in -> NaN out",
            "NaN in",
        ));
    }
    if req.signed_zero {
        out.push(rules(
            report,
            "require.signed_zero",
            "signed zero",
            "signed zero",
        ));
    }
    if req.limits {
        out.push(rules(
            report,
            "require.limits",
            "limits at +-inf",
            "limit at",
        ));
    }
    if req.no_spurious_overflow {
        // Counted over every run (the summary), not only the listed ones.
        let cells: Vec<_> = report
            .non_finite_summary
            .iter()
            .filter(|c| c.reference == "finite")
            .collect();
        let runs: u64 = cells.iter().map(|c| c.runs).sum();
        let inputs: u64 = cells.iter().map(|c| c.inputs).sum();
        let listed = report.non_finite.iter().find(|r| r.reference == "finite");
        let detail = match (listed, cells.first()) {
            (Some(r), _) => format!(
                "kernel {} from {} ({}) to {} ({})",
                r.kernel, r.first.value, r.first.bits, r.last.value, r.last.bits
            ),
            (None, Some(c)) => format!(
                "kernel {} in binade {} from {} ({})",
                c.kernel, c.binade, c.first.value, c.first.bits
            ),
            (None, None) => "none".into(),
        };
        out.push(Judged {
            key: "require.no_spurious_overflow".into(),
            requirement: "no non-finite output where the reference is finite".into(),
            limit: json!(true),
            measured: json!({ "runs": runs, "inputs": inputs }),
            shown: format!("{runs} runs, {inputs} inputs"),
            passed: runs == 0,
            detail,
        });
    }
    if req.monotone {
        let (violations, detail) = match &report.shape {
            Some(s) => (
                s.monotonicity_violations,
                s.violations.first().map_or("none".into(), |v| {
                    format!(
                        "f({}) = {} > f({}) = {}",
                        v.from.value, v.from_output.value, v.to.value, v.to_output.value
                    )
                }),
            ),
            None => (0, "no shape measured".into()),
        };
        out.push(Judged {
            key: "require.monotone".into(),
            requirement: "monotone (no step back)".into(),
            limit: json!(true),
            measured: json!(violations),
            shown: format!("{violations} violations"),
            passed: report.shape.is_some() && violations == 0,
            detail,
        });
    }
    if !req.hygiene.is_empty() {
        let chosen: Vec<_> = report
            .hygiene
            .iter()
            .filter(|h| req.hygiene.contains(&h.check.as_str()))
            .collect();
        let passed = chosen.iter().filter(|h| h.passed).count();
        let missing: Vec<_> = req
            .hygiene
            .iter()
            .filter(|c| !chosen.iter().any(|h| h.check == **c))
            .collect();
        let failures: Vec<String> = chosen
            .iter()
            .filter(|h| !h.passed)
            .map(|h| format!("{}: {}", h.check, h.detail))
            .chain(missing.iter().map(|c| format!("{c}: not run")))
            .collect();
        out.push(Judged {
            key: "require.hygiene".into(),
            requirement: if req.hygiene.len() == crate::kernel::hygiene::CHECKS.len() {
                "hygiene (all six checks)".to_string()
            } else if req.hygiene.len()
                == crate::kernel::hygiene::CHECKS.len() + crate::kernel::hygiene::STRIDED_CHECKS.len()
            {
                "hygiene (all eleven checks of a strided kernel)".to_string()
            } else {
                format!("hygiene: {}", req.hygiene.join(", "))
            },
            limit: json!(req.hygiene),
            measured: json!({ "passed": passed, "checked": req.hygiene.len(),
                "failed": chosen.iter().filter(|h| !h.passed).map(|h| &h.check).collect::<Vec<_>>() }),
            shown: format!("{passed}/{} checks", req.hygiene.len()),
            passed: failures.is_empty(),
            detail: if failures.is_empty() {
                "all passed".into()
            } else {
                failures.join("; ")
            },
        });
    }
    if let Some(side) = req.kinks {
        let ok = |uses: &str| match side {
            KinkSide::Either => uses != "neither",
            KinkSide::Left => uses == "left" || uses == "either",
            KinkSide::Right => uses == "right" || uses == "either",
        };
        let good = report.kinks.iter().filter(|k| ok(k.uses)).count();
        let bad = report.kinks.iter().find(|k| !ok(k.uses));
        let side_name = match side {
            KinkSide::Left => "left",
            KinkSide::Right => "right",
            KinkSide::Either => "either",
        };
        out.push(Judged {
            key: "require.kinks".into(),
            requirement: format!("at kinks: {side_name} one-sided derivative"),
            limit: json!(side),
            measured: json!({ "met": good, "kinks": report.kinks.len(),
                "uses": report.kinks.iter().map(|k| k.uses).collect::<Vec<_>>() }),
            shown: format!("{good}/{} kink points", report.kinks.len()),
            passed: !report.kinks.is_empty() && bad.is_none(),
            detail: bad.map_or(format!("{} kink points checked", report.kinks.len()), |k| {
                format!(
                    "at {} ({}) the kernel uses {}",
                    k.input.value, k.input.bits, k.uses
                )
            }),
        });
    }
    for (i, (limit, r)) in req.ranges.iter().zip(ranges).enumerate() {
        let a = &r.accuracy.figures;
        out.push(Judged {
            key: format!("require.range[{i}]"),
            requirement: format!("max ulp <= {} on [{})", limit.max_ulp, limit.text),
            limit: json!({ "range": limit.text, "max_ulp": limit.max_ulp }),
            measured: json!({ "max_ulp": a.max_ulp, "points": a.points,
                "coverage": r.sweep.coverage }),
            shown: fmt_ulp(a.max_ulp),
            passed: a.points > 0 && a.max_ulp <= limit.max_ulp,
            detail: match &a.worst {
                Some(w) => format!(
                    "{} points; worst at x = {} ({}): {} ulp",
                    a.points,
                    w.input.value,
                    w.input.bits,
                    fmt_ulp(w.ulp)
                ),
                None => "no finite points measured".into(),
            },
        });
    }
    out
}

/// `require.same_verdict_in`: every requirement judged alike by default (`default`) and in the
/// caller's FP environment `env` (`in_env`, judged from the same spec).
pub fn same_verdict(env: &str, default: &[Judged], in_env: &[Judged]) -> Judged {
    let differ: Vec<String> = default
        .iter()
        .zip(in_env)
        .filter(|(d, c)| d.passed != c.passed)
        .map(|(d, c)| {
            let word = |p: bool| if p { "passes" } else { "fails" };
            format!(
                "{} {} by default and {} in {env} ({} against {})",
                d.key,
                word(d.passed),
                word(c.passed),
                d.shown,
                c.shown
            )
        })
        .collect();
    Judged {
        key: "require.same_verdict_in".to_string(),
        requirement: format!("every requirement judged the same in {env} as by default"),
        limit: json!(env),
        measured: json!({ "differing": differ.len(), "judged": default.len() }),
        shown: format!("{}/{} alike", default.len() - differ.len(), default.len()),
        passed: differ.is_empty(),
        detail: if differ.is_empty() {
            format!("{} requirements judged alike", default.len())
        } else {
            differ.join("; ")
        },
    }
}
