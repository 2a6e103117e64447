//! Before and after for each kernel, and which changes count against the candidate.

use super::load::{Figures, KernelKey};
use serde::Serialize;

/// How a figure moved.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Change {
    /// Unchanged.
    Same,
    /// Changed by no more than the tolerance.
    WithinTolerance,
    /// Improved.
    Better,
    /// Got worse beyond the tolerance (judged).
    Worse,
    /// Shown, never judged (throughput, provenance).
    NotJudged,
}

impl Change {
    /// The word the table shows.
    pub fn word(self) -> &'static str {
        match self {
            Change::Same => "same",
            Change::WithinTolerance => "within tolerance",
            Change::Better => "better",
            Change::Worse => "WORSE",
            Change::NotJudged => "(not judged)",
        }
    }
}

/// One figure of one kernel, before and after.
#[derive(Clone, Debug, Serialize)]
pub struct Row {
    /// Name of the figure.
    pub figure: &'static str,
    /// Baseline, as shown.
    pub baseline: String,
    /// Candidate, as shown.
    pub candidate: String,
    /// The verdict.
    pub change: Change,
    /// Which checks or rules changed, when any did.
    #[serde(skip_serializing_if = "String::is_empty")]
    pub detail: String,
}

/// One kernel found in both files.
#[derive(Clone, Debug, Serialize)]
pub struct KernelDiff {
    /// Its identity, in words.
    pub kernel: String,
    /// Whether any judged figure got worse.
    pub worse: bool,
    /// Whether any figure changed at all.
    pub changed: bool,
    /// The figures.
    pub rows: Vec<Row>,
    /// A sweep mismatch, which makes the figures compare different inputs.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

/// What is judged with how much slack.
#[derive(Clone, Copy, Debug)]
pub struct Tolerance {
    /// Ulps max and mean ulp may grow by.
    pub ulp: f64,
    /// How much the correctly rounded and faithful fractions may drop.
    pub fraction: f64,
}

/// Judges a figure where lower is better (`higher_better` flips it).
fn judge(before: f64, after: f64, tolerance: f64, higher_better: bool) -> Change {
    let (b, a) = if higher_better {
        (-before, -after)
    } else {
        (before, after)
    };
    if a == b {
        Change::Same
    } else if a > b + tolerance {
        Change::Worse
    } else if a < b {
        Change::Better
    } else {
        Change::WithinTolerance
    }
}

fn pct(x: f64) -> String {
    format!("{:.4}%", 100.0 * x)
}

/// Passed → failed is worse, failed → passed better; a name missing from the candidate that
/// passed before counts as failing now.
fn checks<K: Ord + Clone + std::fmt::Debug>(
    figure: &'static str,
    before: &std::collections::BTreeMap<K, bool>,
    after: &std::collections::BTreeMap<K, bool>,
    name: impl Fn(&K) -> String,
) -> Row {
    let count = |m: &std::collections::BTreeMap<K, bool>| {
        format!("{}/{}", m.values().filter(|p| **p).count(), m.len())
    };
    let mut now_failing = Vec::new();
    let mut now_passing = Vec::new();
    for (k, passed) in before {
        let after_passed = after.get(k).copied().unwrap_or(false);
        if *passed && !after_passed {
            now_failing.push(name(k));
        }
        if !passed && after_passed {
            now_passing.push(name(k));
        }
    }
    let change = if !now_failing.is_empty() {
        Change::Worse
    } else if !now_passing.is_empty() {
        Change::Better
    } else {
        Change::Same
    };
    let mut detail = Vec::new();
    if !now_failing.is_empty() {
        detail.push(format!("now failing: {}", few(&now_failing)));
    }
    if !now_passing.is_empty() {
        detail.push(format!("now passing: {}", few(&now_passing)));
    }
    Row {
        figure,
        baseline: count(before),
        candidate: count(after),
        change,
        detail: detail.join("; "),
    }
}

/// The first few names, then how many more.
fn few(names: &[String]) -> String {
    const SHOWN: usize = 4;
    let mut s = names[..names.len().min(SHOWN)].join(", ");
    if names.len() > SHOWN {
        s.push_str(&format!(" and {} more", names.len() - SHOWN));
    }
    s
}

/// At most 40 characters.
fn short(s: &str) -> String {
    if s.chars().count() <= 40 {
        s.to_string()
    } else {
        format!("{}…", s.chars().take(39).collect::<String>())
    }
}

fn shown<T: std::fmt::Display>(v: &Option<T>) -> String {
    v.as_ref().map_or("-".to_string(), |x| x.to_string())
}

/// Compares one kernel.
pub fn diff(before: &Figures, after: &Figures, tol: Tolerance) -> KernelDiff {
    let mut rows = vec![
        Row {
            figure: "max ulp",
            baseline: format!("{:.4}", before.max_ulp),
            candidate: format!("{:.4}", after.max_ulp),
            change: judge(before.max_ulp, after.max_ulp, tol.ulp, false),
            detail: String::new(),
        },
        Row {
            figure: "mean ulp",
            baseline: format!("{:.6}", before.mean_ulp),
            candidate: format!("{:.6}", after.mean_ulp),
            change: judge(before.mean_ulp, after.mean_ulp, tol.ulp, false),
            detail: String::new(),
        },
        Row {
            figure: "correctly rounded",
            baseline: pct(before.correctly_rounded),
            candidate: pct(after.correctly_rounded),
            change: judge(
                before.correctly_rounded,
                after.correctly_rounded,
                tol.fraction,
                true,
            ),
            detail: String::new(),
        },
        Row {
            figure: "faithful",
            baseline: pct(before.faithful),
            candidate: pct(after.faithful),
            change: judge(before.faithful, after.faithful, tol.fraction, true),
            detail: String::new(),
        },
        Row {
            figure: "non-finite inputs",
            baseline: format!(
                "{} in {} runs",
                before.non_finite_inputs, before.non_finite_runs
            ),
            candidate: format!(
                "{} in {} runs",
                after.non_finite_inputs, after.non_finite_runs
            ),
            change: judge(
                before.non_finite_inputs as f64,
                after.non_finite_inputs as f64,
                0.0,
                false,
            ),
            detail: String::new(),
        },
        checks("hygiene passed", &before.hygiene, &after.hygiene, |k| {
            k.clone()
        }),
        checks(
            "special values passed",
            &before.special,
            &after.special,
            |(bits, rule)| format!("{rule} at {bits}"),
        ),
        Row {
            figure: "crash",
            baseline: shown(&before.crash),
            candidate: shown(&after.crash),
            change: match (&before.crash, &after.crash) {
                (None, Some(_)) => Change::Worse,
                (Some(_), None) => Change::Better,
                (a, b) if a == b => Change::Same,
                _ => Change::WithinTolerance,
            },
            detail: String::new(),
        },
    ];
    // A crash that stays a crash elsewhere is still a crash: no better, no worse.
    if let Some(r) = rows.last_mut() {
        if r.change == Change::WithinTolerance {
            r.change = Change::Same;
        }
    }
    let changed = rows.iter().any(|r| r.change != Change::Same);
    let worse = rows.iter().any(|r| r.change == Change::Worse);
    rows.extend([
        Row {
            figure: "ns/element",
            baseline: before
                .ns_per_element
                .map_or("-".into(), |x| format!("{x:.2}")),
            candidate: after
                .ns_per_element
                .map_or("-".into(), |x| format!("{x:.2}")),
            change: Change::NotJudged,
            detail: String::new(),
        },
        Row {
            figure: "library sha256",
            baseline: before
                .sha256
                .as_deref()
                .map_or("-".into(), |h| h[..h.len().min(16)].to_string()),
            candidate: after
                .sha256
                .as_deref()
                .map_or("-".into(), |h| h[..h.len().min(16)].to_string()),
            change: Change::NotJudged,
            detail: String::new(),
        },
        Row {
            figure: "compiler",
            baseline: short(&shown(&before.compiler)),
            candidate: short(&shown(&after.compiler)),
            change: Change::NotJudged,
            detail: String::new(),
        },
    ]);
    let note = (before.sweep != after.sweep).then(|| {
        format!(
            "the sweeps differ (baseline: {}; candidate: {}): the figures compare different inputs",
            before.sweep, after.sweep
        )
    });
    KernelDiff {
        kernel: before.key.to_string(),
        worse,
        changed,
        rows,
        note,
    }
}

/// The whole comparison.
#[derive(Clone, Debug, Serialize)]
pub struct Comparison {
    /// "ulpgauge-compare/1".
    pub schema: &'static str,
    /// Baseline file.
    pub baseline: String,
    /// Candidate file.
    pub candidate: String,
    /// --tolerance.
    pub tolerance_ulp: f64,
    /// --fraction-tolerance.
    pub tolerance_fraction: f64,
    /// Kernels in both.
    pub kernels: Vec<KernelDiff>,
    /// Baseline kernels the candidate lacks (judged: worse).
    pub missing: Vec<String>,
    /// Candidate kernels the baseline lacks (listed only).
    pub added: Vec<String>,
    /// 0 or 1.
    pub exit_code: i32,
}

/// Matches kernels by identity and compares each pair.
pub fn compare(
    baseline: &[Figures],
    candidate: &[Figures],
    tol: Tolerance,
) -> (Vec<KernelDiff>, Vec<KernelKey>, Vec<KernelKey>) {
    let mut diffs = Vec::new();
    let mut missing = Vec::new();
    for b in baseline {
        match candidate.iter().find(|c| c.key == b.key) {
            Some(c) => diffs.push(diff(b, c, tol)),
            None => missing.push(b.key.clone()),
        }
    }
    let added = candidate
        .iter()
        .filter(|c| !baseline.iter().any(|b| b.key == c.key))
        .map(|c| c.key.clone())
        .collect();
    (diffs, missing, added)
}

/// The first identity listed twice in one file, which would make matching ambiguous.
pub fn duplicate(kernels: &[Figures]) -> Option<&KernelKey> {
    kernels
        .iter()
        .enumerate()
        .find(|(i, k)| kernels[..*i].iter().any(|o| o.key == k.key))
        .map(|(_, k)| &k.key)
}
