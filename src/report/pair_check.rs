//! A finished pair check (a gated kernel over pairs (a, b)) as reports show it: its verdict,
//! coverage line and JSON. The same code serves a run, one shard and a merge of shards, so a
//! merged report equals the unsharded one.

use crate::check::pairs::{cells, regions, PairAcc, PairShardState, PairSweepId, Region};
use crate::check::Shard;
use crate::format::Format;
use crate::report::BitsValue;
use serde_json::json;

/// Regions listed in a report (their count and pairs are exact whatever this is).
pub const LISTED_REGIONS: usize = 6;

/// Which pairs a check covered, as its coverage line names them.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PairCoverage {
    /// Every b for each of `a_count` patterns of a.
    Exhaustive {
        /// Patterns of a measured.
        a_count: u64,
    },
    /// A bounded sample.
    Sampled {
        /// Pairs per (cell of a, cell of b).
        per_cell: u32,
        /// Edge values against each other.
        edge: bool,
        /// Random pairs.
        random: u64,
    },
}

/// What a shard report adds for `merge`.
pub struct PairShardPart {
    /// Which part.
    pub shard: Shard,
    /// The whole sweep it is a part of.
    pub sweep: PairSweepId,
    /// Its patterns of a (the figures are the report's own accumulator).
    pub a_count: u64,
    /// First pattern of a measured.
    pub a_first: Option<u32>,
    /// Last pattern of a measured.
    pub a_last: Option<u32>,
}

/// A finished pair check.
pub struct PairCheck {
    /// The gated function's name.
    pub function: String,
    /// Its role's name (forward, derivative-a, derivative-b).
    pub role: String,
    /// The format of a, b and y.
    pub format: &'static dyn Format,
    /// The kernel's library, as given.
    pub library: String,
    /// The kernel's symbol.
    pub symbol: String,
    /// Which pairs were covered.
    pub coverage: PairCoverage,
    /// The part of a sharded run, if it is one.
    pub part: Option<PairShardPart>,
    /// Every figure.
    pub acc: PairAcc,
    /// The first crashes (a, b, what).
    pub crashes: Vec<(u32, u32, String)>,
    /// `--max-ulp`.
    pub max_ulp: Option<f64>,
    /// `--allow-non-finite`.
    pub allow_non_finite: bool,
    /// Wall time of the sweep.
    pub seconds: f64,
}

impl PairCheck {
    /// Exit code (0 pass, 1 a finding failed, 3 the kernel crashed or hung) and why.
    pub fn verdict(&self) -> (i32, Vec<String>) {
        let acc = &self.acc;
        let mut reasons = Vec::new();
        if acc.crashed > 0 {
            reasons.push(format!(
                "the kernel crashed or hung on {} pairs",
                acc.crashed
            ));
        }
        let non_finite = acc.spurious_non_finite + acc.missing_non_finite;
        if non_finite > 0 && !self.allow_non_finite {
            reasons.push(format!(
                "{} non-finite outputs where y is finite, {} finite or wrong where y is not",
                acc.spurious_non_finite, acc.missing_non_finite
            ));
        }
        if let Some(limit) = self.max_ulp {
            if acc.max_ulp() > limit {
                reasons.push(format!("max ulp {} > --max-ulp {limit}", acc.max_ulp()));
            }
        }
        let code = if acc.crashed > 0 {
            3
        } else if reasons.is_empty() {
            0
        } else {
            1
        };
        (code, reasons)
    }

    /// The coverage line: which pairs, how many.
    pub fn coverage(&self) -> String {
        let format = self.format;
        let n = self.acc.pairs;
        match self.coverage {
            PairCoverage::Exhaustive { a_count } if a_count == format.pattern_count() => {
                format!("exhaustive, all 2^{} pairs ({n})", 2 * format.width())
            }
            PairCoverage::Exhaustive { a_count } => format!(
                "exhaustive over b for {a_count} patterns of a: {n} pairs{}",
                self.part
                    .as_ref()
                    .map(|p| format!(" (shard {}/{})", p.shard.index, p.shard.count))
                    .unwrap_or_default()
            ),
            PairCoverage::Sampled {
                per_cell,
                edge,
                random,
            } => format!(
                "sampled, {n} pairs ({per_cell} per sign x binade cell of a and b, {} edge x edge, {random} random)",
                if edge { "with" } else { "no" }
            ),
        }
    }

    /// "exhaustive" or "sampled".
    pub fn kind(&self) -> &'static str {
        match self.coverage {
            PairCoverage::Exhaustive { .. } => "exhaustive",
            PairCoverage::Sampled { .. } => "sampled",
        }
    }

    /// The heat map's title.
    pub fn plot_title(&self) -> String {
        format!(
            "{} {} {}: max ulp per binade of a and b ({})",
            self.function,
            self.role,
            self.format.name(),
            self.coverage()
        )
    }

    /// A region of spurious non-finite outputs in words.
    pub fn region_text(&self, r: &Region) -> String {
        let f = self.format;
        let span = |(lo, hi): (usize, usize)| {
            if lo == hi {
                cells::label(f, lo)
            } else {
                format!("{} .. {}", cells::label(f, lo), cells::label(f, hi))
            }
        };
        format!("a in {}, b in {}: {} pairs", span(r.a), span(r.b), r.pairs)
    }

    /// The JSON report (with `shard`, and the state `merge` reads, for a part).
    pub fn json(&self, code: i32, reasons: &[String]) -> serde_json::Value {
        let f = self.format;
        let acc = &self.acc;
        let bv = |bits| BitsValue::new(f, bits);
        let rs = regions(acc);
        let region = |r: &Region| {
            json!({
                "a_cells": [cells::label(f, r.a.0), cells::label(f, r.a.1)],
                "b_cells": [cells::label(f, r.b.0), cells::label(f, r.b.1)],
                "pairs": r.pairs,
            })
        };
        let mut report = json!({
            "kind": "pair-check",
            "function": self.function,
            "arity": 2,
            "role": self.role,
            "format": f.name(),
            "library": self.library,
            "symbol": self.symbol,
            "coverage": {
                "kind": self.kind(),
                "pairs": acc.pairs,
                "text": self.coverage(),
                "shard": self.part.as_ref().map(|p| json!({"index": p.shard.index, "count": p.shard.count})),
            },
            "accuracy": {
                "max_ulp": acc.max_ulp(),
                "worst": acc.worst.map(|w| json!({
                    "a": bv(w.a), "b": bv(w.b), "output": bv(w.output),
                    "reference": bv(w.reference), "ulp": w.ulp,
                })),
                "compared": acc.compared,
                "exact": acc.exact,
                "within_half_ulp": acc.within_half,
                "over_one_ulp": acc.over_one,
            },
            "non_finite": {
                "spurious": acc.spurious_non_finite,
                "missing": acc.missing_non_finite,
                "spurious_cells": acc.cell_spurious.iter().filter(|&&c| c > 0).count(),
                "regions_total": rs.len(),
                "regions": rs.iter().take(LISTED_REGIONS).map(region).collect::<Vec<_>>(),
            },
            "crashes": {
                "pairs": acc.crashed,
                "first": self.crashes.iter().map(|(a, b, s)| json!({
                    "a": bv(*a), "b": bv(*b), "signal": s,
                })).collect::<Vec<_>>(),
            },
            "seconds": self.seconds,
            "verdict": {
                "exit_code": code,
                "passed": code == 0,
                "reasons": reasons,
                "max_ulp_limit": self.max_ulp,
                "non_finite_allowed": self.allow_non_finite,
            },
        });
        if let Some(p) = &self.part {
            let state = PairShardState {
                a_count: p.a_count,
                a_first: p.a_first,
                a_last: p.a_last,
                acc: self.acc.clone(),
                crashes: self.crashes.clone(),
            };
            report["shard"] = json!({
                "index": p.shard.index,
                "count": p.shard.count,
                "state_version": crate::check::pairs::PAIR_STATE_VERSION,
                "sweep": p.sweep,
                "state": state,
            });
        }
        report
    }
}

impl PairCheck {
    /// The CSV of the cell grid: one row per (cell of a, cell of b) that compared a pair or
    /// holds a spurious non-finite output (at most the format's axis², whatever the pairs).
    pub fn csv(&self) -> Result<String, String> {
        let f = self.format;
        let n = self.acc.axis();
        let mut w = csv::Writer::from_writer(Vec::new());
        let row = |w: &mut csv::Writer<Vec<u8>>, fields: &[String]| {
            w.write_record(fields).map_err(|e| e.to_string())
        };
        row(
            &mut w,
            &["a_cell", "b_cell", "max_ulp", "spurious_non_finite"].map(String::from),
        )?;
        for i in 0..n {
            for j in 0..n {
                let (max, spurious) = (
                    self.acc.cell_max[i * n + j],
                    self.acc.cell_spurious[i * n + j],
                );
                if max < 0.0 && spurious == 0 {
                    continue;
                }
                row(
                    &mut w,
                    &[
                        cells::label(f, i),
                        cells::label(f, j),
                        if max < 0.0 {
                            String::new()
                        } else {
                            format!("{max}")
                        },
                        spurious.to_string(),
                    ],
                )?;
            }
        }
        let bytes = w.into_inner().map_err(|e| e.to_string())?;
        String::from_utf8(bytes).map_err(|e| e.to_string())
    }
}
