//! The HTML of pair checks (gated kernels over pairs (a, b)): an index of them on a manifest
//! page, and per check a section with its coverage line, verdict, worst pair, counts, the
//! regions of spurious non-finite outputs and the heat map of max ulp per (binade of a,
//! binade of b), drawn inline from the bounded cell grid.

use super::esc;
use crate::check::pairs::{regions, Region};
use crate::format::hex;
use crate::report::display_value;
use crate::report::pair_check::{PairCheck, LISTED_REGIONS};
use std::fmt::{Result as FmtResult, Write};

fn anchor(i: usize) -> String {
    format!("pair-{}", i + 1)
}

fn verdict(code: i32) -> (&'static str, &'static str) {
    match code {
        0 => ("PASS", "pass"),
        3 => ("CRASHED", "crash"),
        _ => ("FAIL", "fail"),
    }
}

/// The index of a manifest's pair checks: one sortable row each, linked to its section.
pub fn index(out: &mut String, checks: &[&PairCheck]) -> FmtResult {
    writeln!(
        out,
        r#"<section class="index"><h2>Two-input kernels</h2>
<table class="sortable" id="pair-index"><thead><tr><th data-type="text">kernel</th><th data-type="text">function</th><th data-type="text">role</th><th data-type="text">format</th><th data-type="text">coverage</th><th data-type="num">max ulp</th><th data-type="num">spurious non-finite</th><th data-type="text">verdict</th></tr></thead><tbody>"#
    )?;
    for (i, c) in checks.iter().enumerate() {
        let (word, class) = verdict(c.verdict().0);
        let max = c.acc.max_ulp();
        writeln!(
            out,
            r##"<tr><td data-sort="{sym}"><a href="#{id}">{sym}</a></td><td>{function}</td><td>{role}</td><td>{format}</td><td>{coverage}</td><td class="num" data-sort="{max:e}">{max:.4}</td><td class="num" data-sort="{nf}">{nf}</td><td data-sort="{word}"><span class="badge {class}">{word}</span></td></tr>"##,
            id = anchor(i),
            sym = esc(&c.symbol),
            function = esc(&c.function),
            role = esc(&c.role),
            format = esc(c.format.name()),
            coverage = esc(c.kind()),
            nf = c.acc.spurious_non_finite,
        )?;
    }
    writeln!(out, "</tbody></table></section>")
}

/// One pair check's section.
pub fn section(out: &mut String, c: &PairCheck, i: usize) -> FmtResult {
    let f = c.format;
    let acc = &c.acc;
    let (code, reasons) = c.verdict();
    let (word, class) = verdict(code);
    let max = acc.max_ulp();
    let v = |bits| {
        format!(
            r#"<span class="value">{}</span> <span class="bits">({})</span>"#,
            esc(&display_value(f, bits)),
            esc(&hex(f, bits))
        )
    };
    writeln!(
        out,
        r#"<section class="pair-check" id="{id}" data-symbol="{sym}" data-verdict="{word}" data-max-ulp="{max:?}">
<h2>{sym} <span class="sub">{function} {role} {fmt}, two inputs</span> <span class="badge verdict {class}">{word}</span></h2>
<p class="coverage">{coverage}</p>"#,
        id = anchor(i),
        sym = esc(&c.symbol),
        function = esc(&c.function),
        role = esc(&c.role),
        fmt = esc(f.name()),
        coverage = esc(&c.coverage()),
    )?;
    if !reasons.is_empty() {
        writeln!(out, r#"<ul class="reasons">"#)?;
        for r in &reasons {
            writeln!(out, "<li>{}</li>", esc(r))?;
        }
        writeln!(out, "</ul>")?;
    }
    writeln!(
        out,
        r#"<div class="figures"><div class="fig"><div class="label">max error</div><div class="big max-ulp" title="{max:?}">{max:.4} ulp</div></div>
<div class="fig"><div class="label">compared / exact</div><div class="big">{} / {}</div></div>
<div class="fig"><div class="label">within 0.5 ulp / over 1 ulp</div><div class="big">{} / {}</div></div>
<div class="fig"><div class="label">non-finite: spurious / missing</div><div class="big">{} / {}</div></div>
<div class="fig"><div class="label">crashed pairs</div><div class="big">{}</div></div></div>"#,
        acc.compared,
        acc.exact,
        acc.within_half,
        acc.over_one,
        acc.spurious_non_finite,
        acc.missing_non_finite,
        acc.crashed,
    )?;
    match &acc.worst {
        Some(w) => writeln!(
            out,
            r#"<table class="worst-pair"><tbody><tr><th>a</th><td class="worst-a">{}</td></tr><tr><th>b</th><td class="worst-b">{}</td></tr><tr><th>output</th><td>{}</td></tr><tr><th>reference</th><td>{}</td></tr><tr><th>error</th><td class="num">{:.4} ulp</td></tr></tbody></table>"#,
            v(w.a),
            v(w.b),
            v(w.output),
            v(w.reference),
            w.ulp
        )?,
        None => writeln!(out, "<p>No finite output was compared.</p>")?,
    }
    let rs = regions(acc);
    if !rs.is_empty() {
        writeln!(
            out,
            r#"<h3>Spurious non-finite outputs ({} pairs in {} rectangles of binades)</h3>
<table class="regions"><thead><tr><th>a in</th><th>b in</th><th class="num">pairs</th></tr></thead><tbody>"#,
            acc.spurious_non_finite,
            rs.len()
        )?;
        let span = |(lo, hi): (usize, usize)| {
            use crate::check::pairs::cells::label;
            if lo == hi {
                label(f, lo)
            } else {
                format!("{} .. {}", label(f, lo), label(f, hi))
            }
        };
        for r in rs.iter().take(LISTED_REGIONS) {
            let Region { a, b, pairs } = r;
            writeln!(
                out,
                r#"<tr><td>{}</td><td>{}</td><td class="num">{pairs}</td></tr>"#,
                esc(&span(*a)),
                esc(&span(*b))
            )?;
        }
        if rs.len() > LISTED_REGIONS {
            let rest: u64 = rs[LISTED_REGIONS..].iter().map(|r| r.pairs).sum();
            writeln!(
                out,
                r#"<tr><td colspan="2">and {} more</td><td class="num">{rest}</td></tr>"#,
                rs.len() - LISTED_REGIONS
            )?;
        }
        writeln!(out, "</tbody></table>")?;
    }
    let svg = crate::report::pair_heatmap::render(acc, f, &c.plot_title());
    writeln!(
        out,
        r#"<figure class="heatmap">{}</figure>
</section>"#,
        svg.trim_end()
    )
}
