//! The pair check's heat map (SVG): max ulp per (sign × binade of a, sign × binade of b) cell,
//! cells with spurious non-finite outputs marked. Runs of equal colour along a row are one
//! rectangle, so the file is bounded by the format's grid, never by the number of pairs.

use crate::check::pairs::{cells, PairAcc};
use crate::format::Format;
use std::fmt::Write;

/// Colour classes, from no data to non-finite, with their legend text.
const CLASSES: [(&str, &str); 6] = [
    ("#eeeeee", "no finite pair"),
    ("#2e7d32", "max <= 0.5 ulp"),
    ("#c0ca33", "<= 1 ulp"),
    ("#fb8c00", "<= 4 ulps"),
    ("#c62828", "> 4 ulps"),
    ("#4a148c", "non-finite where y is finite"),
];

fn class(acc: &PairAcc, cell: usize) -> usize {
    let max = acc.cell_max[cell];
    if acc.cell_spurious[cell] > 0 {
        5
    } else if max < 0.0 {
        0
    } else if max <= 0.5 {
        1
    } else if max <= 1.0 {
        2
    } else if max <= 4.0 {
        3
    } else {
        4
    }
}

/// The SVG text: a rows (top: −∞ … bottom: +∞), b columns (left: −∞ … right: +∞).
pub fn render(acc: &PairAcc, format: &dyn Format, title: &str) -> String {
    let n = acc.axis();
    let px = if n <= 128 { 8 } else { 2 };
    let (left, top) = (90, 40);
    let side = n * px;
    let width = left + side + 230;
    let height = top + side + 60;
    let mut s = String::new();
    let _ = write!(
        s,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width}\" height=\"{height}\" \
         viewBox=\"0 0 {width} {height}\" font-family=\"sans-serif\" font-size=\"11\">\n\
         <title>{}</title>\n<text x=\"{left}\" y=\"20\" font-size=\"13\">{}</text>\n",
        escape(title),
        escape(title)
    );
    for i in 0..n {
        let mut j = 0;
        while j < n {
            let c = class(acc, i * n + j);
            let start = j;
            while j < n && class(acc, i * n + j) == c {
                j += 1;
            }
            let _ = writeln!(
                s,
                "<rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{px}\" fill=\"{}\"><title>a {} / b {} .. {}</title></rect>",
                left + start * px,
                top + i * px,
                (j - start) * px,
                CLASSES[c].0,
                escape(&cells::label(format, i)),
                escape(&cells::label(format, start)),
                escape(&cells::label(format, j - 1)),
            );
        }
    }
    // Axis marks at ±0 and ±[2^0, 2^1) on both axes.
    for (cell, name) in [
        (cells::cell(format, 0).unwrap_or(0), "+0"),
        (
            cells::cell(format, format.from_f64_exact(1.0).unwrap_or(0)).unwrap_or(0),
            "1",
        ),
    ] {
        let at = cell * px + px / 2;
        let _ = writeln!(
            s,
            "<text x=\"{}\" y=\"{}\" text-anchor=\"end\">a {name}</text>\n<text x=\"{}\" y=\"{}\" text-anchor=\"middle\">b {name}</text>",
            left - 6,
            top + at + 4,
            left + at,
            top + side + 16
        );
    }
    let _ = writeln!(
        s,
        "<text x=\"{left}\" y=\"{}\">rows: sign x binade of a (top -inf, bottom +inf); columns: of b (left -inf, right +inf)</text>",
        top + side + 36
    );
    for (k, (colour, text)) in CLASSES.iter().enumerate() {
        let y = top + k * 18;
        let _ = writeln!(
            s,
            "<rect x=\"{}\" y=\"{y}\" width=\"12\" height=\"12\" fill=\"{colour}\"/><text x=\"{}\" y=\"{}\">{text}</text>",
            left + side + 16,
            left + side + 34,
            y + 10
        );
    }
    s.push_str("</svg>\n");
    s
}

fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}
