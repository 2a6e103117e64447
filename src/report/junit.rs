//! JUnit-style XML, the form CI systems show natively: `<testsuites>` of `<testsuite>`s of
//! `<testcase>`s, a failed requirement as `<failure message="…">` (the finding in a
//! sentence), a crash or an unchecked kernel as `<error>`. Attributes follow the commonly used
//! Jenkins/Ant layout (name, tests, failures, errors, skipped, time, timestamp, hostname on
//! each suite; name, classname, time on each case).
//!
//! Counts for a check report: one case per special-value rule, per hygiene check, one for
//! the accuracy limit (`--max-ulp`; passes without one), one for the MPFR confirmation of the
//! fast reference and one for crashes; the failures are the verdict's failed lines (the MPFR
//! confirmation counted once however many inputs disagree), the errors the crashed kernels.

use super::{CheckReport, ReportFormat};
use crate::certify::Certificate;
use crate::compare::{Change, Comparison};
use crate::matrix::{BuildStatus, Matrix};
use std::fmt::Write;

/// The JUnit XML output of `check`.
pub struct Junit;

/// Escapes text for XML content and attributes (control characters other than tab and
/// newline dropped: XML 1.0 cannot hold them).
fn xml(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            '\n' => out.push_str("&#10;"),
            '\t' => out.push('\t'),
            c if (c as u32) < 0x20 => {}
            c => out.push(c),
        }
    }
    out
}

/// How a case ended.
enum Outcome {
    Passed,
    Failed(String),
    Error(String),
    Skipped(String),
}

/// One case.
struct Case {
    name: String,
    classname: String,
    outcome: Outcome,
}

/// One suite.
struct Suite {
    name: String,
    cases: Vec<Case>,
    out: String,
}

fn case(name: impl Into<String>, classname: &str, outcome: Outcome) -> Case {
    Case {
        name: name.into(),
        classname: classname.to_string(),
        outcome,
    }
}

/// "2024-05-01T12:00:00" from a report date, or the current time.
fn timestamp(date: Option<&str>) -> String {
    let date = date
        .map(str::to_string)
        .unwrap_or_else(super::provenance::utc_now);
    let t: String = date.chars().take(19).collect();
    if t.len() == 19 {
        t
    } else {
        "1970-01-01T00:00:00".into()
    }
}

fn hostname() -> String {
    std::fs::read_to_string("/proc/sys/kernel/hostname")
        .ok()
        .map(|h| h.trim().to_string())
        .filter(|h| !h.is_empty())
        .unwrap_or_else(|| "localhost".into())
}

/// The document of a set of suites.
fn document(name: &str, suites: &[Suite], date: Option<&str>) -> String {
    let count = |f: &dyn Fn(&Outcome) -> bool| -> usize {
        suites
            .iter()
            .flat_map(|s| &s.cases)
            .filter(|c| f(&c.outcome))
            .count()
    };
    let tests: usize = suites.iter().map(|s| s.cases.len()).sum();
    let failures = count(&|o| matches!(o, Outcome::Failed(_)));
    let errors = count(&|o| matches!(o, Outcome::Error(_)));
    let skipped = count(&|o| matches!(o, Outcome::Skipped(_)));
    let stamp = timestamp(date);
    let host = xml(&hostname());
    let mut s = format!(
        "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites name=\"{}\" tests=\"{tests}\" failures=\"{failures}\" errors=\"{errors}\" skipped=\"{skipped}\" time=\"0\">\n",
        xml(name)
    );
    for (id, suite) in suites.iter().enumerate() {
        let n = |f: &dyn Fn(&Outcome) -> bool| suite.cases.iter().filter(|c| f(&c.outcome)).count();
        let _ = writeln!(
            s,
            "  <testsuite name=\"{}\" id=\"{id}\" package=\"ulpgauge\" tests=\"{}\" failures=\"{}\" errors=\"{}\" skipped=\"{}\" time=\"0\" timestamp=\"{stamp}\" hostname=\"{host}\">",
            xml(&suite.name),
            suite.cases.len(),
            n(&|o| matches!(o, Outcome::Failed(_))),
            n(&|o| matches!(o, Outcome::Error(_))),
            n(&|o| matches!(o, Outcome::Skipped(_))),
        );
        for c in &suite.cases {
            let open = format!(
                "    <testcase name=\"{}\" classname=\"{}\" time=\"0\"",
                xml(&c.name),
                xml(&c.classname)
            );
            let _ = match &c.outcome {
                Outcome::Passed => writeln!(s, "{open}/>"),
                Outcome::Failed(m) => writeln!(
                    s,
                    "{open}>\n      <failure message=\"{}\" type=\"finding\">{}</failure>\n    </testcase>",
                    xml(m),
                    xml(m)
                ),
                Outcome::Error(m) => writeln!(
                    s,
                    "{open}>\n      <error message=\"{}\" type=\"crash\">{}</error>\n    </testcase>",
                    xml(m),
                    xml(m)
                ),
                Outcome::Skipped(m) => {
                    writeln!(s, "{open}>\n      <skipped message=\"{}\"/>\n    </testcase>", xml(m))
                }
            };
        }
        if !suite.out.is_empty() {
            let _ = writeln!(s, "    <system-out>{}</system-out>", xml(&suite.out));
        }
        s.push_str("  </testsuite>\n");
    }
    s.push_str("</testsuites>\n");
    s
}

/// A check report's suite: rules, hygiene, the accuracy limit, the MPFR confirmation and
/// crashes.
fn check_suite(r: &CheckReport) -> Suite {
    let symbol = r.kernel.symbol.as_deref().unwrap_or("in-process");
    let classname = format!("ulpgauge.{}.{}.{}", r.function, r.role, r.format);
    let mut cases = Vec::new();
    for s in &r.special_values {
        let name = format!("special value: {} at x = {}", s.rule, s.input.bits);
        let outcome = if s.passed {
            Outcome::Passed
        } else {
            Outcome::Failed(s.message.clone())
        };
        cases.push(case(name, &classname, outcome));
    }
    for h in &r.hygiene {
        let outcome = if h.passed {
            Outcome::Passed
        } else {
            Outcome::Failed(if h.message.is_empty() {
                h.detail.clone()
            } else {
                h.message.clone()
            })
        };
        cases.push(case(format!("hygiene: {}", h.check), &classname, outcome));
    }
    let a = &r.accuracy.figures;
    let limit = r.verdict.max_ulp_limit;
    let accuracy = match limit {
        Some(l) if a.max_ulp > l => Outcome::Failed(super::sentence::over_limit(a.max_ulp, l)),
        _ => Outcome::Passed,
    };
    let name = match limit {
        Some(l) => format!("accuracy: max ulp <= {l}"),
        None => "accuracy: measured (no --max-ulp limit)".to_string(),
    };
    cases.push(case(name, &classname, accuracy));
    let disagreements = &r.provenance.reference_check.disagreements;
    let confirm = if disagreements.is_empty() {
        Outcome::Passed
    } else {
        let lines: Vec<&str> = r
            .verdict
            .failed
            .iter()
            .filter(|f| f.contains("disagrees with MPFR"))
            .map(String::as_str)
            .collect();
        Outcome::Failed(lines.join("; "))
    };
    cases.push(case(
        "reference: fast path confirmed with MPFR",
        &classname,
        confirm,
    ));
    // The verdict's own line, so that the failure reads exactly as the report says it.
    let non_finite = match r
        .verdict
        .failed
        .iter()
        .find(|f| f.starts_with("non-finite:"))
    {
        Some(line) => Outcome::Failed(line.clone()),
        None => Outcome::Passed,
    };
    cases.push(case(
        "non-finite: no NaN or infinity where the reference is finite, nor the reverse",
        &classname,
        non_finite,
    ));
    let crash = match &r.crash {
        None => Outcome::Passed,
        Some(c) => Outcome::Error(format!(
            "the kernel {} at x = {} ({} crash{} in all)",
            if c.signal == "hang" {
                "hung".to_string()
            } else {
                format!("crashed ({})", c.signal)
            },
            super::sentence::shown_of_name(r.input_format, &c.input),
            c.count,
            if c.count == 1 { "" } else { "es" }
        )),
    };
    cases.push(case("runs without crashing or hanging", &classname, crash));
    if let Some(v) = &r.variants {
        let outcome = if v.agree {
            Outcome::Passed
        } else {
            Outcome::Failed(v.message.clone())
        };
        cases.push(case("variants: agree bit for bit", &classname, outcome));
    }
    if let Some(env) = &r.caller_fpenv {
        // Informational: the caller's environment is the verdict's; the case records the change.
        let outcome = if env.verdict_changed {
            Outcome::Failed(env.message.clone())
        } else {
            Outcome::Passed
        };
        let name = format!(
            "caller FP environment ({}): same verdict as the default",
            env.environment.join(",")
        );
        cases.push(case(name, &classname, outcome));
    }
    let worst = a.worst.as_ref().map_or(String::new(), |w| {
        format!(
            "; worst x = {} ({})",
            w.input.bits,
            super::sentence::shown_of_name(r.format, &w.output)
        )
    });
    Suite {
        name: format!("{} {} {} {symbol}", r.function, r.role, r.format),
        cases,
        out: format!(
            "max error {} ulp over {} points ({:?}){worst}; {} non-finite runs",
            a.max_ulp, a.points, r.accuracy.coverage, r.non_finite_total.runs
        ),
    }
}

impl ReportFormat for Junit {
    fn name(&self) -> &'static str {
        "junit"
    }
    fn render(&self, reports: &[CheckReport], _manifest: bool) -> Result<String, String> {
        let suites: Vec<Suite> = reports.iter().map(check_suite).collect();
        let date = reports.first().map(|r| r.provenance.date.as_str());
        Ok(document("ulpgauge check", &suites, date))
    }
}

/// A certificate: one suite for the spec, one case per requirement, an error for a crash.
pub fn certificate(c: &Certificate) -> String {
    let classname = format!("ulpgauge.certify.{}", c.kernel.symbol);
    let mut cases: Vec<Case> = c
        .requirements
        .iter()
        .map(|r| {
            let outcome = if r.passed {
                Outcome::Passed
            } else {
                Outcome::Failed(format!(
                    "{} is not met: measured {}{}",
                    r.requirement,
                    r.shown,
                    if r.detail.is_empty() {
                        String::new()
                    } else {
                        format!(" ({})", r.detail)
                    }
                ))
            };
            case(format!("{}: {}", r.key, r.requirement), &classname, outcome)
        })
        .collect();
    if let Some(crash) = &c.crash {
        cases.push(case(
            "runs without crashing or hanging",
            &classname,
            Outcome::Error(format!(
                "the kernel {} at x = {}",
                if crash.signal == "hang" {
                    "hung".to_string()
                } else {
                    format!("crashed ({})", crash.signal)
                },
                super::sentence::shown_of_name(c.kernel.format, &crash.input)
            )),
        ));
    }
    let suite = Suite {
        name: format!("{} ({})", c.spec.path, c.kernel.symbol),
        cases,
        out: c.statement.clone(),
    };
    document("ulpgauge certify", &[suite], Some(&c.provenance.date))
}

/// A comparison: one suite per kernel, one case per judged figure; kernels missing from the
/// candidate fail in a suite of their own.
pub fn comparison(c: &Comparison) -> String {
    let mut suites: Vec<Suite> = c
        .kernels
        .iter()
        .map(|k| {
            let cases = k
                .rows
                .iter()
                .filter(|r| r.change != Change::NotJudged)
                .map(|r| {
                    let outcome = if r.change == Change::Worse {
                        Outcome::Failed(format!(
                            "{} got worse: {} in the baseline, {} in the candidate{}",
                            r.figure,
                            r.baseline,
                            r.candidate,
                            if r.detail.is_empty() {
                                String::new()
                            } else {
                                format!(" ({})", r.detail)
                            }
                        ))
                    } else {
                        Outcome::Passed
                    };
                    case(r.figure, "ulpgauge.compare", outcome)
                })
                .collect();
            Suite {
                name: k.kernel.clone(),
                cases,
                out: k.note.clone().unwrap_or_default(),
            }
        })
        .collect();
    if !c.missing.is_empty() {
        suites.push(Suite {
            name: "kernels of the baseline".into(),
            cases: c
                .missing
                .iter()
                .map(|m| {
                    case(
                        format!("present in the candidate: {m}"),
                        "ulpgauge.compare",
                        Outcome::Failed(format!(
                            "{m} is in the baseline but missing from the candidate"
                        )),
                    )
                })
                .collect(),
            out: String::new(),
        });
    }
    document("ulpgauge compare", &suites, None)
}

/// A matrix: one suite per build, one case per kernel (failed checks as a failure, a crash or
/// an unchecked kernel as an error); a skipped build's cases are skipped.
pub fn matrix(m: &Matrix) -> String {
    let suites: Vec<Suite> = m
        .builds
        .iter()
        .map(|b| {
            let classname = format!("ulpgauge.matrix.{}", b.build.label.replace(' ', "_"));
            let cases = m
                .kernels
                .iter()
                .map(|k| {
                    let outcome = match b.status {
                        BuildStatus::Skipped => {
                            Outcome::Skipped(b.note.clone().unwrap_or_default())
                        }
                        BuildStatus::Failed => Outcome::Error(format!(
                            "the build failed: {}",
                            b.note.clone().unwrap_or_default()
                        )),
                        BuildStatus::Built => match m
                            .cells
                            .iter()
                            .find(|c| &c.kernel == k && c.build == b.build.label)
                        {
                            None => Outcome::Error("not checked".into()),
                            Some(c) => match (&c.error, &c.crash) {
                                (Some(e), _) => Outcome::Error(format!("not checked: {e}")),
                                (None, Some(crash)) => {
                                    Outcome::Error(format!("the kernel crashed or hung: {crash}"))
                                }
                                (None, None) if !c.failed.is_empty() => {
                                    Outcome::Failed(c.failed.join("; "))
                                }
                                _ => Outcome::Passed,
                            },
                        },
                    };
                    case(k.clone(), &classname, outcome)
                })
                .collect();
            Suite {
                name: format!("build {}", b.build.label),
                cases,
                out: b.compiler.clone().unwrap_or_default(),
            }
        })
        .collect();
    document("ulpgauge matrix", &suites, None)
}

/// A pair check's suite: one case, its verdict (a crash an error, any other reason a failure).
fn pair_suite(c: &super::pair_check::PairCheck) -> Suite {
    let (code, reasons) = c.verdict();
    let classname = format!("ulpgauge.{}.{}.{}", c.function, c.role, c.format.name());
    let outcome = match code {
        0 => Outcome::Passed,
        3 => Outcome::Error(reasons.join("; ")),
        _ => Outcome::Failed(reasons.join("; ")),
    };
    let name = format!(
        "pair check: no spurious non-finite output{}",
        c.max_ulp
            .map_or(String::new(), |l| format!(", max ulp <= {l}"))
    );
    Suite {
        name: format!("{} {} {} {}", c.function, c.role, c.format.name(), c.symbol),
        cases: vec![case(name, &classname, outcome)],
        out: format!("max error {} ulp; {}", c.acc.max_ulp(), c.coverage()),
    }
}

/// The JUnit document of a check with pair checks (gated kernels): the one-input kernels'
/// suites, then one suite of one case per pair check.
pub fn check_with_pairs(
    reports: &[CheckReport],
    pairs: &[&super::pair_check::PairCheck],
) -> String {
    let mut suites: Vec<Suite> = reports.iter().map(check_suite).collect();
    suites.extend(pairs.iter().map(|c| pair_suite(c)));
    let date = reports.first().map(|r| r.provenance.date.as_str());
    document("ulpgauge check", &suites, date)
}
