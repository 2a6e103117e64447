//! One kernel's section (header card, interactive plot, findings in sentences, tables,
//! provenance) and the manifest index, rendered from a report's JSON value, so that `check`
//! and `merge` share them.

use super::{esc, script_json};
use crate::format::{by_name, parse_hex, Format};
use crate::measure::Bucket;
use crate::report::sentence;
use crate::report::CheckReport;
use serde_json::{json, Value};
use std::fmt::{Result as FmtResult, Write};

/// What a kernel's section is drawn from: its report as JSON (the `shard` state left out)
/// and the plot buckets (not part of the JSON).
pub struct KernelInput {
    /// The report, as `check --json` writes it.
    pub report: Value,
    /// Largest error per bucket of input ordinals, with each bucket's worst point.
    pub buckets: Vec<Bucket>,
}

impl KernelInput {
    /// The input of a finished report.
    pub fn of(report: &CheckReport) -> Result<KernelInput, String> {
        let mut value = serde_json::to_value(report).map_err(|e| e.to_string())?;
        if let Some(map) = value.as_object_mut() {
            map.remove("shard");
        }
        Ok(KernelInput {
            report: value,
            buckets: report.accuracy.figures.buckets.clone(),
        })
    }
}

/// A JSON value as text: strings bare, null as "-".
pub(crate) fn text(v: &Value) -> String {
    match v {
        Value::String(s) => s.clone(),
        Value::Null => "-".into(),
        other => other.to_string(),
    }
}

fn format_of(r: &Value) -> Option<&'static dyn Format> {
    r["format"].as_str().and_then(by_name)
}

/// The inputs' format (reports before mixed formats have only `format`).
fn input_format_of(r: &Value) -> Option<&'static dyn Format> {
    r["input_format"]
        .as_str()
        .and_then(by_name)
        .or_else(|| format_of(r))
}

/// "f32", or "bf16 → f32" for a kernel that mixes formats.
fn formats_text(r: &Value) -> String {
    match (r["input_format"].as_str(), r["format"].as_str()) {
        (Some(i), Some(o)) if i != o => format!("{i} → {o}"),
        _ => text(&r["format"]),
    }
}

/// "65504 (0x7bff)" of a {bits, value} object, with the bits in their own element.
fn shown(format: Option<&dyn Format>, v: &Value) -> String {
    let bits = v["bits"].as_str().unwrap_or("");
    let value = match format.and_then(|f| parse_hex(f, bits).ok().map(|b| (f, b))) {
        Some((f, b)) => sentence::value(f, b),
        None => text(&v["value"]),
    };
    if bits.is_empty() {
        return "-".into();
    }
    format!(
        r#"<span class="v">{}</span> <span class="bits">({})</span>"#,
        esc(&value),
        esc(bits)
    )
}

/// The anchor id of the i-th kernel.
fn anchor(i: usize) -> String {
    format!("kernel-{}", i + 1)
}

/// Verdict word and class of a report.
fn verdict(r: &Value) -> (&'static str, &'static str) {
    match r["verdict"]["exit_code"].as_i64() {
        Some(0) => ("PASS", "pass"),
        Some(3) => ("CRASHED", "crash"),
        _ => ("FAIL", "fail"),
    }
}

fn ulp(x: f64) -> String {
    if x >= 1e6 {
        format!("{x:.4e}")
    } else {
        format!("{x:.4}")
    }
}

fn pct(x: Option<f64>) -> String {
    x.map_or("-".into(), |f| format!("{:.2}%", 100.0 * f))
}

/// The manifest index: one sortable row per kernel, linked to its section.
pub fn index(out: &mut String, kernels: &[KernelInput]) -> FmtResult {
    writeln!(
        out,
        r#"<section class="index"><h2>Kernels</h2>
<p class="hint noprint">Click a column heading to sort; click a kernel to go to its section.</p>
<table class="sortable" id="index"><thead><tr><th data-type="text">kernel</th><th data-type="text">function</th><th data-type="text">role</th><th data-type="text">format</th><th data-type="text">coverage</th><th data-type="num">max ulp</th><th data-type="num">correctly rounded</th><th data-type="num">failures</th><th data-type="text">verdict</th></tr></thead><tbody>"#
    )?;
    for (i, k) in kernels.iter().enumerate() {
        let r = &k.report;
        let a = &r["accuracy"];
        let max = a["max_ulp"].as_f64().unwrap_or(0.0);
        let failures = r["verdict"]["failed"].as_array().map_or(0, Vec::len);
        let (word, class) = verdict(r);
        writeln!(
            out,
            r##"<tr data-kernel="{id}"><td data-sort="{sym}"><a href="#{id}">{sym}</a></td><td>{function}</td><td>{role}</td><td>{format}</td><td>{coverage}</td><td class="num" data-sort="{max:e}">{maxs}</td><td class="num" data-sort="{cr}">{crs}</td><td class="num" data-sort="{failures}">{failures}</td><td data-sort="{word}"><span class="badge {class}">{word}</span></td></tr>"##,
            id = anchor(i),
            sym = esc(&text(&r["kernel"]["symbol"])),
            function = esc(&text(&r["function"])),
            role = esc(&text(&r["role"])),
            format = esc(&text(&r["format"])),
            coverage = esc(&text(&a["coverage"])),
            maxs = ulp(max),
            cr = a["correctly_rounded"].as_f64().unwrap_or(0.0),
            crs = pct(a["correctly_rounded"].as_f64()),
        )?;
    }
    writeln!(out, "</tbody></table></section>")
}

/// The plot data the script draws: compact arrays, bits as numbers.
fn plot_data(format: &dyn Format, output: &dyn Format, k: &KernelInput) -> Value {
    let r = &k.report;
    let l = format.layout();
    let bits = |v: &Value| v["bits"].as_str().and_then(|b| parse_hex(format, b).ok());
    let out_bits = |v: &Value| v["bits"].as_str().and_then(|b| parse_hex(output, b).ok());
    let ol = output.layout();
    let ord = |v: &Value| bits(v).map(|b| format.ordinal(b));
    let buckets: Vec<Value> = k
        .buckets
        .iter()
        .filter(|b| b.points > 0)
        .map(|b| {
            let w = b
                .worst
                .map_or(json!(null), |w| json!([w.input, w.output, w.reference]));
            json!([b.lo, b.hi, b.points, short(b.max_ulp), w])
        })
        .collect();
    let runs: Vec<Value> = r["non_finite_summary"]
        .as_array()
        .into_iter()
        .flatten()
        .filter_map(|c| {
            let (a, b) = (ord(&c["first"])?, ord(&c["last"])?);
            Some(json!([
                a.min(b),
                a.max(b),
                c["kernel"],
                c["reference"],
                c["inputs"],
                c["binade"]
            ]))
        })
        .collect();
    let mut marks: Vec<Value> = Vec::new();
    for t in r["thresholds"].as_array().into_iter().flatten() {
        for who in ["reference", "kernel"] {
            if let Some(o) = ord(&t[who]) {
                marks.push(json!([
                    o,
                    who,
                    format!("{} {} ({})", who, text(&t["kind"]), text(&t["side"]))
                ]));
            }
        }
    }
    let near: Vec<Value> = r["neighbourhoods"]
        .as_array()
        .into_iter()
        .flatten()
        .map(|n| {
            let points: Vec<Value> = n["points"]
                .as_array()
                .into_iter()
                .flatten()
                .map(|p| {
                    json!([
                        bits(&p["input"]),
                        out_bits(&p["output"]),
                        out_bits(&p["reference"]),
                        out_bits(&p["left"]),
                        p["ulp"]
                    ])
                })
                .collect();
            json!({"what": n["what"], "centre": bits(&n["centre"]), "points": points})
        })
        .collect();
    let binades: Vec<Value> = r["accuracy"]["per_binade"]
        .as_array()
        .into_iter()
        .flatten()
        .map(|b| {
            json!([
                b["binade"],
                b["points"],
                short(b["max_ulp"].as_f64().unwrap_or(0.0)),
                short(b["mean_ulp"].as_f64().unwrap_or(0.0)),
                short(b["correctly_rounded"].as_f64().unwrap_or(0.0)),
                bits(&b["worst_input"])
            ])
        })
        .collect();
    json!({
        "binades": binades,
        "format": format.name(),
        "exp": l.width() - l.precision(),
        "mant": l.precision() - 1,
        "finite_only": l.is_finite_only(),
        "top": format.ordinal(format.max_finite(false)),
        "out": {
            "format": output.name(),
            "exp": ol.width() - ol.precision(),
            "mant": ol.precision() - 1,
            "finite_only": ol.is_finite_only(),
            "top": output.ordinal(output.max_finite(false)),
        },
        "buckets": buckets,
        "runs": runs,
        "marks": marks,
        "near": near,
        "worst": r["accuracy"]["worst"]["input"]["bits"].as_str().and_then(|b| parse_hex(format, b).ok()),
    })
}

/// One kernel's section.
pub fn section(out: &mut String, k: &KernelInput, i: usize) -> FmtResult {
    let r = &k.report;
    let format = format_of(r);
    let input = input_format_of(r);
    let a = &r["accuracy"];
    let id = anchor(i);
    let symbol = text(&r["kernel"]["symbol"]);
    let (word, class) = verdict(r);
    let max = a["max_ulp"].as_f64().unwrap_or(0.0);
    let worst = &a["worst"];
    writeln!(
        out,
        r#"<section class="kernel" id="{id}" data-symbol="{sym}" data-verdict="{word}" data-max-ulp="{max:?}" data-worst-bits="{wb}">
<h2>{sym} <span class="sub">{function} {role} {fmt}</span> <span class="badge {class}">{word}</span></h2>"#,
        sym = esc(&symbol),
        function = esc(&text(&r["function"])),
        role = esc(&text(&r["role"])),
        fmt = esc(&formats_text(r)),
        wb = esc(worst["input"]["bits"].as_str().unwrap_or("")),
    )?;
    card(out, r, format, word, class)?;
    // Key figures.
    writeln!(out, r#"<div class="figures">"#)?;
    writeln!(
        out,
        r#"<div class="fig"><div class="label">max error</div><div class="big max-ulp" title="{max:?}">{} ulp</div></div>"#,
        ulp(max)
    )?;
    writeln!(
        out,
        r#"<div class="fig"><div class="label">mean / rms</div><div class="big">{:.4} / {:.4}</div></div>"#,
        a["mean_ulp"].as_f64().unwrap_or(0.0),
        a["rms_ulp"].as_f64().unwrap_or(0.0)
    )?;
    writeln!(
        out,
        r#"<div class="fig"><div class="label">correctly rounded / faithful</div><div class="big">{} / {}</div></div>"#,
        pct(a["correctly_rounded"].as_f64()),
        pct(a["faithful"].as_f64())
    )?;
    writeln!(out, "</div>")?;
    if !worst.is_null() {
        writeln!(
            out,
            r#"<p class="worst">Worst input x = <span class="worst-input">{}</span>: the kernel returned {}; the correctly rounded reference is {} (y ≈ {}), an error of {} ulp.</p>"#,
            shown(input, &worst["input"]),
            shown(format, &worst["output"]),
            shown(format, &worst["reference"]),
            text(&worst["exact"]),
            ulp(worst["ulp"].as_f64().unwrap_or(0.0))
        )?;
    }
    let rounding = &a["rounding"];
    if let Some(m) = rounding["message"].as_str() {
        writeln!(
            out,
            r#"<p class="rounding">Rounding diagnosis: {}.</p>"#,
            super::esc(m)
        )?;
    } else if rounding["other_neighbour"].as_u64().unwrap_or(0) > 0 {
        writeln!(
            out,
            r#"<p class="rounding">Rounding diagnosis: of the {} points whose output is the exact value's other neighbour, {} were rounded toward zero, {} up, {} down, {} were ties rounded away from zero; no rule explains almost all of them.</p>"#,
            rounding["other_neighbour"],
            rounding["toward_zero"],
            rounding["up"],
            rounding["down"],
            rounding["nearest_ties_away"]
        )?;
    }
    failed(out, r, input)?;
    environment(out, r)?;
    if let (Some(i), Some(f)) = (input, format) {
        let data = plot_data(i, f, k);
        writeln!(
            out,
            r#"<h3>Error over the inputs</h3>
<figure class="plot" data-plot="{id}">
<div class="plot-tools noprint"><button type="button" class="reset">reset zoom</button> <span class="hint">Drag across the plot to zoom into a range; hover or click a bar for its worst point.</span></div>
<div class="plot-area" role="img" aria-label="largest ulp error per bucket of inputs"></div>
<div class="pick" aria-live="polite">Click a bar to see its worst input, the kernel's output and the correctly rounded reference.</div>
<figcaption>Bars: largest error per bucket of inputs on an ordinal axis (every binade the same width; height log2(1 + ulp)). Hatched bands: non-finite runs. Dashed lines: thresholds (long dashes the reference's, short dashes the kernel's).</figcaption>
<script type="application/json" class="plot-data">{}</script>
</figure>"#,
            script_json(&data)
        )?;
    }
    non_finite(out, r, input)?;
    thresholds(out, r)?;
    rules(out, r, input, format)?;
    binades(out, r, input)?;
    shape_and_kinks(out, r, input, format)?;
    provenance(out, r)?;
    writeln!(out, "</section>")
}

fn card(
    out: &mut String,
    r: &Value,
    _format: Option<&dyn Format>,
    word: &str,
    class: &str,
) -> FmtResult {
    let a = &r["accuracy"];
    let s = &r["sweep"];
    let lib = &r["provenance"]["library"];
    let coverage = match a["coverage"].as_str() {
        Some("exhaustive") => format!(
            "exhaustive: every one of the {} inputs of range {}",
            sentence::count(s["inputs"].as_u64().unwrap_or(0)),
            esc(&text(&s["range"]))
        ),
        _ => format!(
            "sampled: {} inputs of range {} ({} sweep, seed {}): evidence, not proof",
            sentence::count(s["inputs"].as_u64().unwrap_or(0)),
            esc(&text(&s["range"])),
            esc(&s["kinds"].as_array().map_or(String::new(), |k| k
                .iter()
                .map(text)
                .collect::<Vec<_>>()
                .join("+"))),
            text(&s["seed"])
        ),
    };
    let params: Vec<String> = r["params"]
        .as_object()
        .into_iter()
        .flatten()
        .map(|(k, v)| format!("{k} = {}", text(v)))
        .collect();
    writeln!(out, r#"<dl class="card">"#)?;
    let rows: Vec<(&str, String)> = vec![
        ("function", esc(&text(&r["function"]))),
        ("role", esc(&text(&r["role"]))),
        ("format", esc(&text(&r["format"]))),
        (
            "symbol",
            format!("<code>{}</code>", esc(&text(&r["kernel"]["symbol"]))),
        ),
        (
            "library",
            format!("<code>{}</code>", esc(&text(&r["kernel"]["library"]))),
        ),
        (
            "signature",
            match r["kernel"]["strides"].as_array() {
                Some(s) if s.len() == 2 => {
                    format!("strided, element strides sx = {}, sy = {}", s[0], s[1])
                }
                _ => "contiguous".into(),
            },
        ),
        (
            "library sha256",
            format!(
                r#"<code class="hash">{}</code>"#,
                esc(&text(&lib["sha256"]))
            ),
        ),
        ("compiler", esc(&text(&lib["compiler"]))),
        (
            "parameters",
            if params.is_empty() {
                "none".into()
            } else {
                esc(&params.join(", "))
            },
        ),
        ("coverage", coverage),
        (
            "measured points",
            format!(
                "{} (finite input, output and reference)",
                sentence::count(a["points"].as_u64().unwrap_or(0))
            ),
        ),
        (
            "verdict",
            format!(
                r#"<span class="badge {class} verdict">{word}</span> exit status {}"#,
                text(&r["verdict"]["exit_code"])
            ),
        ),
    ];
    for (k, v) in rows {
        writeln!(out, "<dt>{k}</dt><dd>{v}</dd>")?;
    }
    if let Some(ns) = r["kernel"]["ns_per_element"].as_f64() {
        writeln!(out, "<dt>throughput</dt><dd>{ns:.2} ns per element</dd>")?;
    }
    writeln!(out, "</dl>")
}

fn failed(out: &mut String, r: &Value, format: Option<&dyn Format>) -> FmtResult {
    let list = r["verdict"]["failed"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    let crash = &r["crash"];
    if list.is_empty() && crash.is_null() {
        return writeln!(
            out,
            r#"<p class="ok">✓ Every hygiene check and special-value rule passed{}.</p>"#,
            if r["verdict"]["max_ulp_limit"].is_null() {
                ""
            } else {
                ", and the largest error is within --max-ulp"
            }
        );
    }
    writeln!(out, r#"<h3>Findings</h3><ul class="failed">"#)?;
    if !crash.is_null() {
        writeln!(
            out,
            r#"<li class="crash">✗ The kernel {} at x = {} ({} crash{} in all); its outputs there are missing from the figures.</li>"#,
            if crash["signal"] == "hang" {
                "hung".to_string()
            } else {
                format!("crashed ({})", esc(&text(&crash["signal"])))
            },
            shown(format, &crash["input"]),
            text(&crash["count"]),
            if crash["count"].as_u64() == Some(1) {
                ""
            } else {
                "es"
            }
        )?;
    }
    for f in &list {
        writeln!(out, "<li>✗ {}</li>", esc(&text(f)))?;
    }
    writeln!(out, "</ul>")
}

/// The caller's FP environment and the dispatch variants, when the report has them.
fn environment(out: &mut String, r: &Value) -> FmtResult {
    let env = &r["caller_fpenv"];
    let variants = &r["variants"];
    if env.is_null() && variants.is_null() {
        return Ok(());
    }
    writeln!(out, "<h3>Where it runs</h3>")?;
    if !env.is_null() {
        writeln!(
            out,
            r#"<p class="fpenv">{}</p>"#,
            esc(&text(&env["message"]))
        )?;
    }
    if !variants.is_null() {
        writeln!(
            out,
            r#"<p class="variants">{}</p>"#,
            esc(&text(&variants["message"]))
        )?;
        writeln!(
            out,
            "<table><thead><tr><th>variant</th><th>max ulp</th><th>mean ulp</th><th>non-finite runs</th><th>ns/element</th></tr></thead><tbody>"
        )?;
        for v in variants["variants"].as_array().into_iter().flatten() {
            writeln!(
                out,
                "<tr><td>{}</td><td>{}</td><td>{:.4}</td><td>{}</td><td>{}</td></tr>",
                esc(&text(&v["name"])),
                ulp(v["max_ulp"].as_f64().unwrap_or(0.0)),
                v["mean_ulp"].as_f64().unwrap_or(0.0),
                text(&v["non_finite_runs"]),
                v["ns_per_element"]
                    .as_f64()
                    .map_or("-".to_string(), |n| format!("{n:.2}"))
            )?;
        }
        writeln!(out, "</tbody></table>")?;
    }
    Ok(())
}

fn non_finite(out: &mut String, r: &Value, format: Option<&dyn Format>) -> FmtResult {
    let total = &r["non_finite_total"];
    let runs = total["runs"].as_u64().unwrap_or(0);
    writeln!(out, "<h3>Non-finite results</h3>")?;
    if runs == 0 {
        return writeln!(out, "<p>None: wherever the reference is finite the kernel's output is too, and the other way round.</p>");
    }
    writeln!(
        out,
        r#"<p class="nf-total">{} inputs in {} runs where the kernel and the reference differ in class (NaN, ±inf, finite).</p>"#,
        sentence::count(total["inputs"].as_u64().unwrap_or(0)),
        sentence::count(runs)
    )?;
    let listed = r["non_finite"].as_array().cloned().unwrap_or_default();
    writeln!(out, r#"<p>The longest runs:</p><ul class="runs">"#)?;
    for run in listed.iter().take(10) {
        writeln!(out, "<li>{}</li>", esc(&text(&run["message"])))?;
    }
    writeln!(out, "</ul>")?;
    let cells = r["non_finite_summary"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    const SHOWN: usize = 64;
    writeln!(
        out,
        r#"<details><summary>Every run counted per sign and binade of x ({} cells)</summary><table><thead><tr><th>binade</th><th>kernel</th><th>reference</th><th class="num">runs</th><th class="num">inputs</th><th>first x</th><th>last x</th></tr></thead><tbody>"#,
        cells.len()
    )?;
    for c in cells.iter().take(SHOWN) {
        writeln!(
            out,
            r#"<tr><td>{}</td><td>{}</td><td>{}</td><td class="num">{}</td><td class="num">{}</td><td>{}</td><td>{}</td></tr>"#,
            esc(&text(&c["binade"])),
            esc(&text(&c["kernel"])),
            esc(&text(&c["reference"])),
            text(&c["runs"]),
            text(&c["inputs"]),
            shown(format, &c["first"]),
            shown(format, &c["last"])
        )?;
    }
    if cells.len() > SHOWN {
        writeln!(
            out,
            r#"<tr><td colspan="7">… {} more cells in the JSON report (non_finite_summary)</td></tr>"#,
            cells.len() - SHOWN
        )?;
    }
    writeln!(out, "</tbody></table></details>")
}

fn thresholds(out: &mut String, r: &Value) -> FmtResult {
    let list = r["thresholds"].as_array().cloned().unwrap_or_default();
    let near = r["neighbourhoods"].as_array().cloned().unwrap_or_default();
    if list.is_empty() && near.is_empty() {
        return Ok(());
    }
    writeln!(
        out,
        "<h3>Thresholds and kinks</h3><ul class=\"thresholds\">"
    )?;
    for t in &list {
        writeln!(out, "<li>{}</li>", esc(&text(&t["message"])))?;
    }
    writeln!(out, "</ul>")?;
    if !near.is_empty() {
        writeln!(
            out,
            r#"<p class="hint">Kernel output (circles; triangles along the top: NaN or no output) against the correctly rounded reference (squares), {} steps on each side, in output steps from the reference at the centre; these inputs are shown, not counted in the figures.</p><div class="near-grid"></div>"#,
            near.first()
                .and_then(|n| n["points"].as_array())
                .map_or(0, |p| p.len() / 2)
        )?;
    }
    Ok(())
}

fn rules(
    out: &mut String,
    r: &Value,
    input: Option<&dyn Format>,
    format: Option<&dyn Format>,
) -> FmtResult {
    let specials = r["special_values"].as_array().cloned().unwrap_or_default();
    let hygiene = r["hygiene"].as_array().cloned().unwrap_or_default();
    let failed_s = specials.iter().filter(|s| s["passed"] == false).count();
    let failed_h = hygiene.iter().filter(|s| s["passed"] == false).count();
    writeln!(
        out,
        r#"<details{}><summary>Special-value rules: {} of {} passed; hygiene checks: {} of {} passed</summary>"#,
        if failed_s + failed_h > 0 { " open" } else { "" },
        specials.len() - failed_s,
        specials.len(),
        hygiene.len() - failed_h,
        hygiene.len()
    )?;
    writeln!(
        out,
        r#"<table><thead><tr><th></th><th>rule</th><th>x</th><th>f(x)</th><th>expected</th><th>in words</th></tr></thead><tbody>"#
    )?;
    for s in &specials {
        let ok = s["passed"] == true;
        writeln!(
            out,
            r#"<tr class="{}"><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>"#,
            if ok { "passed" } else { "failed" },
            if ok { "✓" } else { "✗" },
            esc(&text(&s["rule"])),
            shown(input, &s["input"]),
            if s["output"].is_null() {
                "none (crashed or hung)".into()
            } else {
                shown(format, &s["output"])
            },
            shown(format, &s["expected"]),
            esc(&text(&s["message"]))
        )?;
    }
    writeln!(out, "</tbody></table>")?;
    writeln!(
        out,
        r#"<table><thead><tr><th></th><th>hygiene check</th><th>in words</th></tr></thead><tbody>"#
    )?;
    for h in &hygiene {
        let ok = h["passed"] == true;
        let message = match h["message"].as_str() {
            Some(m) if !m.is_empty() => m.to_string(),
            _ => text(&h["detail"]),
        };
        writeln!(
            out,
            r#"<tr class="{}"><td>{}</td><td>{}</td><td>{}</td></tr>"#,
            if ok { "passed" } else { "failed" },
            if ok { "✓" } else { "✗" },
            esc(&text(&h["check"])),
            esc(&message)
        )?;
    }
    writeln!(out, "</tbody></table></details>")
}

/// Binade rows written into the page; the script shows the rest from the plot data.
const BINADES_SHOWN: usize = 12;

/// Eight significant digits: the figures' four decimals survive, at half the digits of the
/// shortest form.
fn short(x: f64) -> Value {
    format!("{x:.7e}")
        .parse::<f64>()
        .map_or(json!(x), |v| json!(v))
}

fn binades(out: &mut String, r: &Value, format: Option<&dyn Format>) -> FmtResult {
    let all = r["accuracy"]["per_binade"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    // The worst binades first (ties in increasing x): what a reader looks for.
    let mut rows: Vec<&Value> = all.iter().collect();
    rows.sort_by(|a, b| {
        let (x, y) = (
            a["max_ulp"].as_f64().unwrap_or(0.0),
            b["max_ulp"].as_f64().unwrap_or(0.0),
        );
        y.total_cmp(&x)
    });
    rows.truncate(BINADES_SHOWN);
    writeln!(
        out,
        r#"<details class="binade-box"><summary>Per binade of x ({} rows; the {} with the largest errors first)</summary>"#,
        all.len(),
        rows.len()
    )?;
    if all.len() > rows.len() {
        writeln!(
            out,
            r#"<p class="noprint"><button type="button" class="all-binades">show all {} rows in increasing x</button></p>"#,
            all.len()
        )?;
    }
    writeln!(
        out,
        r#"<table class="binades sortable"><thead><tr><th data-type="text">binade</th><th class="num" data-type="num">points</th><th class="num" data-type="num">max ulp</th><th class="num" data-type="num">mean ulp</th><th class="num" data-type="num">correctly rounded</th><th data-type="text">worst x</th></tr></thead><tbody>"#
    )?;
    for b in rows {
        writeln!(
            out,
            r#"<tr><td>{}</td><td class="num">{}</td><td class="num" data-sort="{:e}">{}</td><td class="num">{:.4}</td><td class="num" data-sort="{}">{}</td><td>{}</td></tr>"#,
            esc(&text(&b["binade"])),
            text(&b["points"]),
            b["max_ulp"].as_f64().unwrap_or(0.0),
            ulp(b["max_ulp"].as_f64().unwrap_or(0.0)),
            b["mean_ulp"].as_f64().unwrap_or(0.0),
            b["correctly_rounded"].as_f64().unwrap_or(0.0),
            pct(b["correctly_rounded"].as_f64()),
            shown(format, &b["worst_input"])
        )?;
    }
    writeln!(out, "</tbody></table></details>")?;
    let hist = r["accuracy"]["histogram"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    let regions = r["accuracy"]["regions"]
        .as_array()
        .cloned()
        .unwrap_or_default();
    writeln!(
        out,
        r#"<details><summary>Error histogram and regions of x</summary><table><thead><tr><th>error up to (ulp)</th><th class="num">points</th></tr></thead><tbody>"#
    )?;
    for h in &hist {
        let up = if h["up_to"].is_null() {
            "more".to_string()
        } else {
            text(&h["up_to"])
        };
        writeln!(
            out,
            r#"<tr><td>{up}</td><td class="num">{}</td></tr>"#,
            text(&h["count"])
        )?;
    }
    writeln!(
        out,
        r#"</tbody></table><table><thead><tr><th>region</th><th class="num">points</th><th class="num">max ulp</th></tr></thead><tbody>"#
    )?;
    for g in &regions {
        writeln!(
            out,
            r#"<tr><td>{}</td><td class="num">{}</td><td class="num">{}</td></tr>"#,
            esc(&text(&g["region"])),
            text(&g["points"]),
            ulp(g["max_ulp"].as_f64().unwrap_or(0.0))
        )?;
    }
    writeln!(out, "</tbody></table></details>")
}

fn shape_and_kinks(
    out: &mut String,
    r: &Value,
    input: Option<&dyn Format>,
    format: Option<&dyn Format>,
) -> FmtResult {
    let kinks = r["kinks"].as_array().cloned().unwrap_or_default();
    if !kinks.is_empty() {
        writeln!(out, "<h3>Kinks</h3><ul>")?;
        for k in &kinks {
            writeln!(
                out,
                "<li>At x = {} the kernel returns {}: it uses the {} one-sided derivative (left {}, right {}).</li>",
                shown(input, &k["input"]),
                if k["output"].is_null() { "nothing (crashed)".into() } else { shown(format, &k["output"]) },
                esc(&text(&k["uses"])),
                shown(format, &k["left"]),
                shown(format, &k["right"])
            )?;
        }
        writeln!(out, "</ul>")?;
    }
    let s = &r["shape"];
    if s.is_object() {
        let v = s["monotonicity_violations"].as_u64().unwrap_or(0);
        let j = s["jump_count"].as_u64().unwrap_or(0);
        writeln!(
            out,
            "<p class=\"shape\">Shape: {} monotonicity violation{}, {} jump{}{}.</p>",
            sentence::count(v),
            if v == 1 { "" } else { "s" },
            sentence::count(j),
            if j == 1 { "" } else { "s" },
            if s["monotone_function"] == true {
                " (the function is monotone)"
            } else {
                ""
            }
        )?;
        let violations = s["violations"].as_array().cloned().unwrap_or_default();
        if !violations.is_empty() {
            writeln!(out, "<ul>")?;
            for w in violations.iter().take(5) {
                writeln!(
                    out,
                    "<li>From x = {} to {} the output goes from {} to {}, against the function's direction.</li>",
                    shown(input, &w["from"]),
                    shown(input, &w["to"]),
                    shown(format, &w["from_output"]),
                    shown(format, &w["to_output"])
                )?;
            }
            writeln!(out, "</ul>")?;
        }
    }
    Ok(())
}

fn provenance(out: &mut String, r: &Value) -> FmtResult {
    let p = &r["provenance"];
    let s = &r["sweep"];
    let check = &p["reference_check"];
    let disagreements = check["disagreements"].as_array().map_or(0, Vec::len);
    writeln!(
        out,
        r#"<details><summary>Provenance and sweep</summary><dl class="card">"#
    )?;
    let rows = [
        ("ulpgauge", text(&p["ulpgauge"])),
        (
            "MPFR / GMP",
            format!("{} / {}", text(&p["mpfr"]), text(&p["gmp"])),
        ),
        (
            "CPU",
            format!(
                "{} ({})",
                text(&p["cpu"]["model"]),
                p["cpu"]["features"].as_array().map_or(String::new(), |f| f
                    .iter()
                    .map(text)
                    .collect::<Vec<_>>()
                    .join(" "))
            ),
        ),
        ("date", text(&p["date"])),
        (
            "library",
            format!(
                "{} (sha256 {})",
                text(&p["library"]["path"]),
                text(&p["library"]["sha256"])
            ),
        ),
        (
            "sweep",
            format!(
                "{}; range {}; {} per binade, {} neighbours, seed {}; {} probes, {} further inputs",
                s["kinds"].as_array().map_or(String::new(), |k| k
                    .iter()
                    .map(text)
                    .collect::<Vec<_>>()
                    .join("+")),
                text(&s["range"]),
                text(&s["per_binade"]),
                text(&s["neighbours"]),
                text(&s["seed"]),
                text(&s["probes"]),
                text(&s["extra_inputs"])
            ),
        ),
        (
            "reference check",
            format!(
                "{} extremes recomputed with MPFR alone; {} disagreement{}",
                check["confirmed_with_mpfr"]
                    .as_u64()
                    .map_or_else(|| text(&check["confirmed_with_mpfr"]), |n| n.to_string()),
                disagreements,
                if disagreements == 1 { "" } else { "s" }
            ),
        ),
        (
            "reference failures",
            format!(
                "{} inputs left out (reference undecided)",
                text(&r["reference_failures"]["count"])
            ),
        ),
    ];
    for (k, v) in rows {
        writeln!(out, "<dt>{k}</dt><dd>{}</dd>", esc(&v))?;
    }
    writeln!(out, "</dl></details>")
}
