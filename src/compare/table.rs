//! The comparison as a terminal table.

use super::diff::{Change, Comparison};

/// One block per kernel (figure, baseline, candidate, change), then the summary; with
/// `changed_only` unchanged kernels are counted but not shown.
pub fn render(c: &Comparison, changed_only: bool) -> String {
    let mut s = format!(
        "compare {} (baseline) -> {} (candidate), tolerance {} ulp, {} of a fraction\n",
        c.baseline, c.candidate, c.tolerance_ulp, c.tolerance_fraction
    );
    for k in c.kernels.iter().filter(|k| k.changed || !changed_only) {
        let status = if k.worse {
            "WORSE"
        } else if k.changed {
            "changed, not worse"
        } else {
            "same"
        };
        s.push_str(&format!("\n{}: {status}\n", k.kernel));
        let w0 = k.rows.iter().map(|r| r.figure.len()).max().unwrap_or(0);
        let w1 = k
            .rows
            .iter()
            .map(|r| r.baseline.chars().count())
            .max()
            .unwrap_or(0)
            .max(8);
        let w2 = k
            .rows
            .iter()
            .map(|r| r.candidate.chars().count())
            .max()
            .unwrap_or(0)
            .max(9);
        s.push_str(&format!(
            "  {:<w0$}  {:>w1$}  {:>w2$}  change\n",
            "figure", "baseline", "candidate"
        ));
        for r in &k.rows {
            s.push_str(&format!(
                "  {:<w0$}  {:>w1$}  {:>w2$}  {}\n",
                r.figure,
                r.baseline,
                r.candidate,
                r.change.word()
            ));
            if !r.detail.is_empty() && r.change != Change::NotJudged {
                s.push_str(&format!("  {:<w0$}  {}\n", "", r.detail));
            }
        }
        if let Some(note) = &k.note {
            s.push_str(&format!("  note: {note}\n"));
        }
    }
    for m in &c.missing {
        s.push_str(&format!("\nMISSING from the candidate: {m}\n"));
    }
    for a in &c.added {
        s.push_str(&format!("\nonly in the candidate (not judged): {a}\n"));
    }
    let worse = c.kernels.iter().filter(|k| k.worse).count();
    let changed = c.kernels.iter().filter(|k| k.changed && !k.worse).count();
    s.push_str(&format!(
        "\n{} kernels compared: {worse} worse, {changed} changed but not worse, {} the same; {} missing, {} only in the candidate\n",
        c.kernels.len(),
        c.kernels.len() - worse - changed,
        c.missing.len(),
        c.added.len()
    ));
    s.push_str(if c.exit_code == 0 {
        "verdict: no regression\n"
    } else {
        "verdict: REGRESSION\n"
    });
    s
}
