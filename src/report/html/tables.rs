//! The pages of `certify`, `compare` and `matrix`: their tables, with changes and failures
//! highlighted (by words and symbols as well as colour).

use super::kernel::{section, KernelInput};
use super::{esc, page};
use crate::certify::Certificate;
use crate::compare::{Change, Comparison};
use crate::matrix::{BuildStatus, Matrix};
use std::fmt::Write;

fn badge(word: &str) -> String {
    let class = match word {
        "pass" | "PASS" => "pass",
        "crashed" | "CRASHED" => "crash",
        _ => "fail",
    };
    format!(
        r#"<span class="badge {class} verdict">{}</span>"#,
        esc(&word.to_uppercase())
    )
}

/// The certificate: verdict, statement, requirements, then the check it rests on.
pub fn certificate_page(c: &Certificate) -> Result<String, String> {
    let mut b = String::new();
    let k = &c.kernel;
    let e = |e: std::fmt::Error| e.to_string();
    writeln!(
        b,
        r#"<section class="certificate" data-verdict="{}"><h2>Certificate {}</h2>
<p class="statement">{}</p>
<dl class="card"><dt>kernel</dt><dd><code>{}</code> in <code>{}</code></dd><dt>function</dt><dd>{} {} {}</dd><dt>spec</dt><dd><code>{}</code> (sha256 <code class="hash">{}</code>)</dd></dl>
<table class="requirements"><thead><tr><th></th><th>requirement</th><th>measured</th><th>spec key</th><th>detail</th></tr></thead><tbody>"#,
        esc(c.verdict),
        badge(c.verdict),
        esc(&c.statement),
        esc(&k.symbol),
        esc(&k.library),
        esc(&k.function),
        esc(&k.role),
        esc(k.format),
        esc(&c.spec.path),
        esc(&c.spec.sha256),
    )
    .map_err(e)?;
    for r in &c.requirements {
        writeln!(
            b,
            r#"<tr class="{}"><td>{}</td><td>{}</td><td>{}</td><td><code>{}</code></td><td>{}</td></tr>"#,
            if r.passed { "passed" } else { "failed" },
            if r.passed { "✓" } else { "✗" },
            esc(&r.requirement),
            esc(&r.shown),
            esc(&r.key),
            esc(&r.detail)
        )
        .map_err(e)?;
    }
    writeln!(b, "</tbody></table></section>").map_err(e)?;
    let input = KernelInput::of(&c.check)?;
    section(&mut b, &input, 0).map_err(e)?;
    Ok(page(
        &format!("ulpgauge certificate: {} ({})", k.symbol, c.verdict),
        &b,
    ))
}

fn change_class(c: Change) -> (&'static str, &'static str) {
    match c {
        Change::Worse => ("worse", "▲ "),
        Change::Better => ("better", "▼ "),
        Change::WithinTolerance => ("within", "≈ "),
        Change::Same => ("same", ""),
        Change::NotJudged => ("unjudged", ""),
    }
}

/// The comparison: one table per kernel, changed rows highlighted, worse ones first in the
/// summary.
pub fn comparison_page(c: &Comparison) -> Result<String, String> {
    let mut b = String::new();
    let e = |e: std::fmt::Error| e.to_string();
    let worse = c.kernels.iter().filter(|k| k.worse).count();
    let changed = c.kernels.iter().filter(|k| k.changed && !k.worse).count();
    writeln!(
        b,
        r#"<section class="comparison" data-verdict="{}"><h2>{} {}</h2>
<p>Baseline <code>{}</code>, candidate <code>{}</code>; tolerance {} ulp and {} of a fraction. {} kernels compared: {} worse, {} changed but not worse, {} the same; {} missing from the candidate, {} only in the candidate.</p>"#,
        if c.exit_code == 0 { "pass" } else { "fail" },
        if c.exit_code == 0 { "No regression" } else { "Regression" },
        badge(if c.exit_code == 0 { "pass" } else { "fail" }),
        esc(&c.baseline),
        esc(&c.candidate),
        c.tolerance_ulp,
        c.tolerance_fraction,
        c.kernels.len(),
        worse,
        changed,
        c.kernels.len() - worse - changed,
        c.missing.len(),
        c.added.len()
    )
    .map_err(e)?;
    for m in &c.missing {
        writeln!(
            b,
            r#"<p class="worse">✗ Missing from the candidate: {}</p>"#,
            esc(m)
        )
        .map_err(e)?;
    }
    for a in &c.added {
        writeln!(
            b,
            r#"<p>Only in the candidate (not judged): {}</p>"#,
            esc(a)
        )
        .map_err(e)?;
    }
    writeln!(b, "</section>").map_err(e)?;
    for (i, k) in c.kernels.iter().enumerate() {
        let status = if k.worse {
            "worse"
        } else if k.changed {
            "changed"
        } else {
            "same"
        };
        writeln!(
            b,
            r#"<section class="kernel-diff {status}" id="diff-{}"><h3>{} <span class="badge {}">{}</span></h3><table><thead><tr><th>figure</th><th class="num">baseline</th><th class="num">candidate</th><th>change</th></tr></thead><tbody>"#,
            i + 1,
            esc(&k.kernel),
            if k.worse { "fail" } else if k.changed { "changed" } else { "pass" },
            if k.worse { "WORSE" } else if k.changed { "changed, not worse" } else { "same" }
        )
        .map_err(e)?;
        for r in &k.rows {
            let (class, mark) = change_class(r.change);
            writeln!(
                b,
                r#"<tr class="{class}"><td>{}</td><td class="num">{}</td><td class="num">{}</td><td>{mark}{}{}</td></tr>"#,
                esc(r.figure),
                esc(&r.baseline),
                esc(&r.candidate),
                esc(r.change.word()),
                if r.detail.is_empty() { String::new() } else { format!(r#"<div class="detail">{}</div>"#, esc(&r.detail)) }
            )
            .map_err(e)?;
        }
        writeln!(b, "</tbody></table>").map_err(e)?;
        if let Some(note) = &k.note {
            writeln!(b, r#"<p class="note">Note: {}</p>"#, esc(note)).map_err(e)?;
        }
        writeln!(b, "</section>").map_err(e)?;
    }
    Ok(page("ulpgauge compare", &b))
}

/// The matrix: kernels down, builds across; each cell against the row's first checked build
/// (worse: a larger max ulp or more failed checks).
pub fn matrix_page(m: &Matrix) -> Result<String, String> {
    let mut b = String::new();
    let e = |e: std::fmt::Error| e.to_string();
    writeln!(
        b,
        r#"<section class="matrix"><h2>Compiler matrix</h2><p>Manifest <code>{}</code>; {}. A cell shows the largest error, the correctly rounded fraction and the failed checks; ▲ marks a cell worse than the row's first build, ▼ a better one.</p><ol class="builds">"#,
        esc(&m.manifest),
        esc(&m.sweep)
    )
    .map_err(e)?;
    for r in &m.builds {
        let what = match r.status {
            BuildStatus::Built => esc(r.compiler.as_deref().unwrap_or("compiler unknown")),
            BuildStatus::Skipped => format!(
                "<strong>skipped</strong>: {}",
                esc(r.note.as_deref().unwrap_or(""))
            ),
            BuildStatus::Failed => format!(
                "<strong>build failed</strong>: {}",
                esc(r.note.as_deref().unwrap_or(""))
            ),
        };
        writeln!(b, "<li><code>{}</code>: {what}</li>", esc(&r.build.label)).map_err(e)?;
    }
    writeln!(b, "</ol>").map_err(e)?;
    let built: Vec<&str> = m
        .builds
        .iter()
        .filter(|r| r.status == BuildStatus::Built)
        .map(|r| r.build.label.as_str())
        .collect();
    write!(
        b,
        r#"<table class="matrix-table"><thead><tr><th>kernel</th>"#
    )
    .map_err(e)?;
    for label in &built {
        write!(b, "<th>{}</th>", esc(label)).map_err(e)?;
    }
    writeln!(b, "</tr></thead><tbody>").map_err(e)?;
    for kernel in &m.kernels {
        let cells: Vec<_> = built
            .iter()
            .map(|label| {
                m.cells
                    .iter()
                    .find(|c| &c.kernel == kernel && c.build == *label)
            })
            .collect();
        let first = cells.iter().flatten().find(|c| c.error.is_none());
        write!(b, "<tr><th scope=\"row\"><code>{}</code></th>", esc(kernel)).map_err(e)?;
        for cell in &cells {
            let Some(c) = cell else {
                write!(b, "<td>-</td>").map_err(e)?;
                continue;
            };
            if let Some(err) = &c.error {
                write!(b, r#"<td class="worse">✗ not checked: {}</td>"#, esc(err)).map_err(e)?;
                continue;
            }
            let (class, mark) = match first {
                Some(f) if !std::ptr::eq(*f, *c) => {
                    let (m0, m1) = (f.max_ulp.unwrap_or(0.0), c.max_ulp.unwrap_or(0.0));
                    let (f0, f1) = (f.failed_checks.unwrap_or(0), c.failed_checks.unwrap_or(0));
                    if m1 > m0 || f1 > f0 || (c.crash.is_some() && f.crash.is_none()) {
                        ("worse", "▲ ")
                    } else if m1 < m0 || f1 < f0 {
                        ("better", "▼ ")
                    } else {
                        ("same", "")
                    }
                }
                _ => ("same", ""),
            };
            let title = if c.failed.is_empty() {
                String::new()
            } else {
                c.failed.join("\n")
            };
            write!(
                b,
                r#"<td class="{class}" title="{}">{mark}{} ulp | {:.2}% | {} failed{}</td>"#,
                esc(&title),
                c.max_ulp.map_or("-".into(), |x| if x >= 1e6 {
                    format!("{x:.4e}")
                } else {
                    format!("{x:.4}")
                }),
                100.0 * c.correctly_rounded.unwrap_or(0.0),
                c.failed_checks.unwrap_or(0),
                c.crash
                    .as_ref()
                    .map_or(String::new(), |s| format!(" | {}", esc(s)))
            )
            .map_err(e)?;
        }
        writeln!(b, "</tr>").map_err(e)?;
    }
    writeln!(b, "</tbody></table></section>").map_err(e)?;
    Ok(page("ulpgauge matrix", &b))
}
