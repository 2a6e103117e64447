//! The HTML report: one self-contained page (inline style and script, no network), built from
//! the bounded summaries of the reports, never from per-point lists. Everything a reader needs
//! is rendered as HTML; the script only adds the interactive plots (hover, click, zoom), the
//! sortable index and the colour scheme switch.
//!
//! Pages: [`Html`] for `check` (one kernel or a manifest run, also `merge` through
//! [`check_page`]), [`certificate_page`], [`comparison_page`] and [`matrix_page`].

mod kernel;
mod pair;
mod tables;

pub use kernel::KernelInput;
pub use tables::{certificate_page, comparison_page, matrix_page};

use super::{CheckReport, ReportFormat};
use std::fmt::Write;

/// The HTML output of `check`.
pub struct Html;

const STYLE: &str = include_str!("style.css");
const SCRIPT: &str = include_str!("script.js");

/// Escapes text for HTML content and attribute values.
pub(crate) fn esc(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// JSON for a `<script type="application/json">` block: "</" cannot close the element.
pub(crate) fn script_json(value: &serde_json::Value) -> String {
    serde_json::to_string(value)
        .unwrap_or_else(|_| "null".into())
        .replace("</", "<\\/")
}

/// The whole page around `body`.
pub(crate) fn page(title: &str, body: &str) -> String {
    let mut out = String::with_capacity(body.len() + STYLE.len() + SCRIPT.len() + 1024);
    let _ = write!(
        out,
        r#"<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="ulpgauge {version}">
<link rel="icon" href="data:,">
<title>{title}</title>
<style>
{STYLE}</style>
</head>
<body>
<header class="top"><h1>{title}</h1><button type="button" id="theme" class="noprint" aria-label="switch colour scheme">light / dark</button></header>
<main>
{body}</main>
<footer>Written by ulpgauge {version}. This page is self-contained: it loads nothing from the network.</footer>
<script>
{SCRIPT}</script>
</body>
</html>
"#,
        version = env!("CARGO_PKG_VERSION"),
        title = esc(title),
    );
    out
}

/// The page of `check` or `merge`: one kernel, or a manifest's kernels behind an index.
pub fn check_page(kernels: &[KernelInput], manifest: bool) -> Result<String, String> {
    check_page_with_pairs(kernels, &[], manifest)
}

/// [`check_page`] with pair checks (gated kernels) after the one-input kernels, each group
/// behind its own index on a manifest page.
pub fn check_page_with_pairs(
    kernels: &[KernelInput],
    pairs: &[&crate::report::pair_check::PairCheck],
    manifest: bool,
) -> Result<String, String> {
    let mut body = String::new();
    if manifest && !kernels.is_empty() {
        kernel::index(&mut body, kernels).map_err(|e| e.to_string())?;
    }
    if manifest && !pairs.is_empty() {
        pair::index(&mut body, pairs).map_err(|e| e.to_string())?;
    }
    for (i, k) in kernels.iter().enumerate() {
        kernel::section(&mut body, k, i).map_err(|e| e.to_string())?;
    }
    for (i, c) in pairs.iter().enumerate() {
        pair::section(&mut body, c, i).map_err(|e| e.to_string())?;
    }
    let title = match (kernels, pairs) {
        ([], [one]) if !manifest => format!(
            "ulpgauge check: {} {} {} ({})",
            one.function,
            one.role,
            one.format.name(),
            one.symbol
        ),
        (_, [_, ..]) => format!("ulpgauge check: {} kernels", kernels.len() + pairs.len()),
        ([one], []) if !manifest => format!(
            "ulpgauge check: {} {} {} ({})",
            kernel::text(&one.report["function"]),
            kernel::text(&one.report["role"]),
            kernel::text(&one.report["format"]),
            kernel::text(&one.report["kernel"]["symbol"])
        ),
        _ => format!("ulpgauge check: {} kernels", kernels.len()),
    };
    Ok(page(&title, &body))
}

impl ReportFormat for Html {
    fn name(&self) -> &'static str {
        "html"
    }
    fn render(&self, reports: &[CheckReport], manifest: bool) -> Result<String, String> {
        let inputs = reports
            .iter()
            .map(KernelInput::of)
            .collect::<Result<Vec<_>, String>>()?;
        check_page(&inputs, manifest)
    }
}
