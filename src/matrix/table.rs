//! The matrix as a terminal table, CSV and JSON.

use super::{BuildStatus, Cell, Matrix};

fn cell_text(c: Option<&Cell>) -> String {
    let Some(c) = c else {
        return "-".into();
    };
    if let Some(e) = &c.error {
        return format!("not checked: {}", e.chars().take(30).collect::<String>());
    }
    let mut s = format!(
        "{} | {:.2}% | {}",
        c.max_ulp.map_or("-".into(), short_ulp),
        100.0 * c.correctly_rounded.unwrap_or(0.0),
        c.failed_checks.unwrap_or(0)
    );
    if let Some(crash) = &c.crash {
        s.push_str(&format!(
            " | {}",
            crash.split(' ').next().unwrap_or("crash")
        ));
    }
    s
}

/// Four significant digits, in exponent form when large.
fn short_ulp(x: f64) -> String {
    if x >= 1e6 {
        format!("{x:.3e}")
    } else if x >= 100.0 {
        format!("{x:.1}")
    } else {
        format!("{x:.3}")
    }
}

/// The terminal table: kernels down, builds across.
pub fn render(m: &Matrix) -> String {
    let mut s = format!(
        "compiler matrix of {} ({})\ncell: max ulp | correctly rounded | failed checks (hygiene, special values)\n\n",
        m.manifest, m.sweep
    );
    for (i, b) in m.builds.iter().enumerate() {
        let what = match b.status {
            BuildStatus::Built => b
                .compiler
                .clone()
                .unwrap_or_else(|| "compiler unknown".into()),
            BuildStatus::Skipped => format!("SKIPPED: {}", b.note.clone().unwrap_or_default()),
            BuildStatus::Failed => format!("BUILD FAILED: {}", b.note.clone().unwrap_or_default()),
        };
        s.push_str(&format!("  [{}] {:<24} {what}\n", i + 1, b.build.label));
    }
    s.push('\n');
    let built: Vec<_> = m
        .builds
        .iter()
        .enumerate()
        .filter(|(_, b)| b.status == BuildStatus::Built)
        .collect();
    let rows: Vec<Vec<String>> = m
        .kernels
        .iter()
        .map(|k| {
            let mut row = vec![k.clone()];
            for (_, b) in &built {
                row.push(cell_text(
                    m.cells
                        .iter()
                        .find(|c| &c.kernel == k && c.build == b.build.label),
                ));
            }
            row
        })
        .collect();
    let mut header = vec!["kernel".to_string()];
    header.extend(
        built
            .iter()
            .map(|(i, b)| format!("[{}] {}", i + 1, b.build.label)),
    );
    let widths: Vec<usize> = (0..header.len())
        .map(|j| {
            rows.iter()
                .map(|r| r[j].chars().count())
                .chain([header[j].chars().count()])
                .max()
                .unwrap_or(0)
        })
        .collect();
    for r in std::iter::once(&header).chain(rows.iter()) {
        let line: Vec<String> = r
            .iter()
            .zip(&widths)
            .map(|(t, w)| format!("{t:<w$}"))
            .collect();
        s.push_str(line.join("  ").trim_end());
        s.push('\n');
    }
    s
}

fn field(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn num(x: Option<f64>) -> String {
    x.map_or(String::new(), |v| format!("{v:?}"))
}

/// One row per kernel and build.
pub fn csv(m: &Matrix) -> String {
    let mut s = String::from(
        "kernel,function,format,role,build,cc,cflags,compiler,max_ulp,mean_ulp,correctly_rounded,faithful,failed_checks,crash,error,failed\n",
    );
    for c in &m.cells {
        let b = m.builds.iter().find(|b| b.build.label == c.build);
        let fields = [
            c.kernel.clone(),
            c.function.clone(),
            c.format.clone(),
            c.role.clone(),
            c.build.clone(),
            b.map_or(String::new(), |b| b.build.cc.clone()),
            b.map_or(String::new(), |b| b.build.cflags.clone()),
            b.and_then(|b| b.compiler.clone()).unwrap_or_default(),
            num(c.max_ulp),
            num(c.mean_ulp),
            num(c.correctly_rounded),
            num(c.faithful),
            c.failed_checks.map_or(String::new(), |n| n.to_string()),
            c.crash.clone().unwrap_or_default(),
            c.error.clone().unwrap_or_default(),
            c.failed.join("; "),
        ];
        let line: Vec<String> = fields.iter().map(|f| field(f)).collect();
        s.push_str(&line.join(","));
        s.push('\n');
    }
    s
}

/// The matrix as pretty JSON.
pub fn json(m: &Matrix) -> Result<String, String> {
    let mut s = serde_json::to_string_pretty(m).map_err(|e| e.to_string())?;
    s.push('\n');
    Ok(s)
}
