//! SVG plot: max ulp error per bucket of inputs against x (x on an ordinal axis, so every
//! binade gets the same width), non-finite runs shaded, thresholds marked. Written by hand.

use super::{CheckReport, ReportFormat};
use crate::format::{by_name, parse_hex, Format};
use std::fmt::Write;

/// The SVG output.
pub struct Svg;

const WIDTH: f64 = 960.0;
const PANEL: f64 = 340.0;
const LEFT: f64 = 70.0;
const RIGHT: f64 = 30.0;
const TOP: f64 = 40.0;
const BOTTOM: f64 = 50.0;

fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// log2(1 + e): linear near 0, logarithmic for large errors.
fn scale(e: f64) -> f64 {
    (1.0 + e).log2()
}

fn panel(out: &mut String, r: &CheckReport, top: f64) -> Result<(), String> {
    // The x axis is the inputs' (mixed-format kernels: the input format's ordinals).
    let format: &dyn Format = by_name(r.input_format).ok_or("unknown format")?;
    let acc = &r.accuracy.figures;
    let ord = |bits: &str| parse_hex(format, bits).ok().map(|b| format.ordinal(b));
    // The axis spans the measured points, the non-finite runs and the thresholds, within the
    // finite inputs (an infinite input sits at the edge).
    let top_ord = format.ordinal(format.max_finite(false));
    let mut marks: Vec<i64> = acc.buckets.iter().flat_map(|b| [b.lo, b.hi]).collect();
    for run in &r.non_finite {
        marks.extend(ord(&run.first.bits).into_iter().chain(ord(&run.last.bits)));
    }
    for t in &r.thresholds {
        marks.extend(
            t.reference
                .iter()
                .chain(&t.kernel)
                .filter_map(|v| ord(&v.bits)),
        );
    }
    let marks: Vec<i64> = marks
        .into_iter()
        .map(|o| o.clamp(-top_ord, top_ord))
        .collect();
    let (lo, hi) = match (marks.iter().min(), marks.iter().max()) {
        (Some(&a), Some(&b)) => (a, b.max(a + 1)),
        _ => (-top_ord, top_ord),
    };
    let plot_w = WIDTH - LEFT - RIGHT;
    let plot_h = PANEL - TOP - BOTTOM;
    let x_of = |o: i64| LEFT + (o.clamp(lo, hi) - lo) as f64 / (hi - lo) as f64 * plot_w;
    let t_max = scale(acc.max_ulp.max(1.0)) * 1.05;
    let y_of = |e: f64| top + TOP + plot_h - scale(e) / t_max * plot_h;
    let symbol = r.kernel.symbol.as_deref().unwrap_or("in-process kernel");
    writeln!(
        out,
        r#"<text x="{LEFT}" y="{}" font-size="15" font-weight="bold">{} {} ({}) — {}: max {:.4} ulp over {} points ({})</text>"#,
        top + 22.0,
        escape(&r.function),
        r.role,
        if r.input_format == r.output_format {
            r.format.to_string()
        } else {
            format!("{} → {}", r.input_format, r.output_format)
        },
        escape(symbol),
        acc.max_ulp,
        acc.points,
        if r.accuracy.coverage == crate::sweep::Coverage::Exhaustive { "exhaustive" } else { "sampled" }
    )
    .map_err(|e| e.to_string())?;
    let base = top + TOP + plot_h;
    writeln!(out, r##"<rect x="{LEFT}" y="{}" width="{plot_w}" height="{plot_h}" fill="#fcfcfc" stroke="#999"/>"##, top + TOP).map_err(|e| e.to_string())?;
    for run in &r.non_finite {
        if let (Some(a), Some(b)) = (ord(&run.first.bits), ord(&run.last.bits)) {
            let (a, b) = (a.min(b), a.max(b));
            let (xa, xb) = (x_of(a), x_of(b));
            writeln!(
                out,
                r##"<rect x="{xa:.2}" y="{}" width="{:.2}" height="{plot_h}" fill="#e04040" fill-opacity="0.25"><title>non-finite: kernel {} vs reference {}, {} .. {} ({} inputs)</title></rect>"##,
                top + TOP,
                (xb - xa).max(1.5),
                run.kernel,
                run.reference,
                run.first.bits,
                run.last.bits,
                run.count
            )
            .map_err(|e| e.to_string())?;
        }
    }
    for b in acc.buckets.iter().filter(|b| b.points > 0) {
        let (xa, xb) = (x_of(b.lo), x_of(b.hi + 1));
        let y = y_of(b.max_ulp);
        writeln!(
            out,
            r##"<rect x="{xa:.2}" y="{y:.2}" width="{:.2}" height="{:.2}" fill="#3060c0"/>"##,
            (xb - xa).max(0.5),
            (base - y).max(0.0)
        )
        .map_err(|e| e.to_string())?;
    }
    for t in &r.thresholds {
        let marks = [
            ("reference", &t.reference, "#208020"),
            ("kernel", &t.kernel, "#d07000"),
        ];
        for (who, at, colour) in marks {
            if let Some(o) = at.as_ref().and_then(|v| ord(&v.bits)) {
                let x = x_of(o);
                writeln!(
                    out,
                    r##"<line x1="{x:.2}" y1="{}" x2="{x:.2}" y2="{base}" stroke="{colour}" stroke-dasharray="5,3"><title>{who} {:?} threshold ({}) at {}</title></line><text x="{:.2}" y="{}" font-size="10" fill="{colour}" text-anchor="{}">{who} {}{}</text>"##,
                    top + TOP,
                    t.kind,
                    t.side,
                    at.as_ref().map(|v| v.bits.as_str()).unwrap_or(""),
                    if x > LEFT + 0.75 * plot_w { x - 2.0 } else { x + 2.0 },
                    top + TOP + 12.0 + if who == "kernel" { 12.0 } else { 0.0 },
                    if x > LEFT + 0.75 * plot_w { "end" } else { "start" },
                    if matches!(t.kind, crate::sweep::ThresholdKind::Overflow) { "overflow " } else { "saturation " },
                    t.side
                )
                .map_err(|e| e.to_string())?;
            }
        }
    }
    // y ticks.
    for e in [
        0.0, 0.5, 1.0, 2.0, 4.0, 16.0, 64.0, 256.0, 1024.0, 65536.0, 16777216.0,
    ] {
        if scale(e) > t_max {
            break;
        }
        let y = y_of(e);
        writeln!(out, r##"<line x1="{}" y1="{y:.2}" x2="{LEFT}" y2="{y:.2}" stroke="#666"/><text x="{}" y="{:.2}" font-size="10" text-anchor="end">{e}</text>"##, LEFT - 4.0, LEFT - 6.0, y + 3.0).map_err(|e| e.to_string())?;
    }
    // x ticks at 0 and ±2^k, at least 55 px apart.
    let mut ticks: Vec<(f64, String)> = Vec::new();
    let mut candidates: Vec<(i64, String)> = vec![(0, "0".into())];
    for k in format.emin()..=format.emax() {
        if let Some(b) = format.from_f64_exact(2f64.powi(k)) {
            candidates.push((format.ordinal(b), format!("2^{k}")));
            candidates.push((-format.ordinal(b), format!("-2^{k}")));
        }
    }
    // Zero first, then left to right, each kept if it clears the last one kept.
    candidates.sort_by_key(|c| (c.0 != 0, c.0));
    for (o, label) in candidates {
        if o < lo || o > hi {
            continue;
        }
        let x = x_of(o);
        if ticks.iter().all(|(tx, _)| (tx - x).abs() >= 55.0) {
            ticks.push((x, label));
        }
    }
    for (x, label) in ticks {
        writeln!(out, r##"<line x1="{x:.2}" y1="{base}" x2="{x:.2}" y2="{}" stroke="#666"/><text x="{x:.2}" y="{}" font-size="10" text-anchor="middle">{label}</text>"##, base + 4.0, base + 16.0).map_err(|e| e.to_string())?;
    }
    writeln!(out, r#"<text x="{}" y="{}" font-size="11" text-anchor="middle">x (ordinal axis: each binade the same width); bars: max ulp error per bucket (scale log2(1+ulp)); red: non-finite runs; dashed: thresholds</text>"#, LEFT + plot_w / 2.0, base + 36.0).map_err(|e| e.to_string())?;
    Ok(())
}

impl ReportFormat for Svg {
    fn name(&self) -> &'static str {
        "svg"
    }
    fn render(&self, reports: &[CheckReport], _manifest: bool) -> Result<String, String> {
        let height = PANEL * reports.len().max(1) as f64;
        let mut out = format!(
            r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{height}" viewBox="0 0 {WIDTH} {height}" font-family="sans-serif">
<rect width="100%" height="100%" fill="white"/>
"#
        );
        for (i, r) in reports.iter().enumerate() {
            panel(&mut out, r, i as f64 * PANEL)?;
        }
        out.push_str("</svg>\n");
        Ok(out)
    }
}
