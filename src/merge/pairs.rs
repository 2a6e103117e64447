//! `merge` of the shards of a pair check (a gated kernel over pairs, `check --shard I/N`):
//! each shard holds the accumulator of its patterns of a; they are checked to be the parts
//! 1..=N of one sweep, joined, and reported by the code an unsharded run uses, so the merged
//! report equals the unsharded one except `seconds` (the shards' sum).

use crate::check::pairs::{PairAcc, PairShardState, PairSweepId, PAIR_STATE_VERSION};
use crate::check::Shard;
use crate::format::{self, Format};
use crate::report::pair_check::{PairCheck, PairCoverage};
use serde_json::Value;
use std::collections::BTreeMap;
use std::path::Path;

/// Most crash records a report lists (as a run keeps them).
const KEPT_CRASHES: usize = 8;

/// Whether a kernel report is a pair check's.
pub fn is_pair(report: &Value) -> bool {
    report.get("kind").and_then(Value::as_str) == Some("pair-check")
}

/// The keys that must agree between shards of one pair check.
fn frame(report: &Value) -> Value {
    let pick = |p: &str| report.pointer(p).cloned().unwrap_or(Value::Null);
    serde_json::json!({
        "function": pick("/function"),
        "role": pick("/role"),
        "format": pick("/format"),
        "library": pick("/library"),
        "symbol": pick("/symbol"),
        "sweep kind": pick("/coverage/kind"),
        "max_ulp_limit": pick("/verdict/max_ulp_limit"),
        "non_finite_allowed": pick("/verdict/non_finite_allowed"),
        "shard count": pick("/shard/count"),
        "range, parameters or patterns of a": pick("/shard/sweep"),
    })
}

/// One shard as read: its part, sweep and state.
struct Part<'a> {
    path: &'a Path,
    report: &'a Value,
    shard: Shard,
    state: PairShardState,
}

/// Reads and checks one shard's part, state and agreement with its own report.
fn read_part<'a>(
    path: &'a Path,
    report: &'a Value,
    format: &dyn Format,
) -> Result<Part<'a>, String> {
    let name = path.display();
    let s = report
        .get("shard")
        .filter(|s| s.is_object())
        .ok_or_else(|| format!("{name}: not a shard report (run check with --shard I/N)"))?;
    let index = s.get("index").and_then(Value::as_u64);
    let count = s.get("count").and_then(Value::as_u64);
    let shard = match (index, count) {
        (Some(index), Some(count)) if index >= 1 && index <= count => Shard { index, count },
        _ => return Err(format!("{name}: bad \"shard\" index/count")),
    };
    let version = s.get("state_version").and_then(Value::as_u64);
    if version != Some(u64::from(PAIR_STATE_VERSION)) {
        return Err(format!(
            "{name}: pair shard state version {}, this build reads {PAIR_STATE_VERSION} (run every shard with one ulpgauge build)",
            version.map_or("none".to_string(), |v| v.to_string())
        ));
    }
    let state: PairShardState = serde_json::from_value(s.get("state").cloned().unwrap_or_default())
        .map_err(|e| format!("{name}: unreadable pair shard state: {e}"))?;
    state
        .validate(format)
        .map_err(|e| format!("{name}: bad pair shard state field {e}"))?;
    let stated = [
        (
            "coverage.pairs",
            report.pointer("/coverage/pairs"),
            state.acc.pairs as f64,
        ),
        (
            "accuracy.max_ulp",
            report.pointer("/accuracy/max_ulp"),
            state.acc.max_ulp(),
        ),
        (
            "non_finite.spurious",
            report.pointer("/non_finite/spurious"),
            state.acc.spurious_non_finite as f64,
        ),
        (
            "crashes.pairs",
            report.pointer("/crashes/pairs"),
            state.acc.crashed as f64,
        ),
    ];
    for (key, in_report, from_state) in stated {
        if in_report.and_then(Value::as_f64) != Some(from_state) {
            return Err(format!(
                "{name}: the pair shard state does not give the report's {key} ({} in the report, {from_state} from the state)",
                in_report.map_or("nothing".to_string(), Value::to_string)
            ));
        }
    }
    Ok(Part {
        path,
        report,
        shard,
        state,
    })
}

/// Merges the shards of one pair check (in any order): the merged JSON and the check.
pub fn merge_pair_kernel(shards: &[(&Path, &Value)]) -> Result<(Value, PairCheck), String> {
    let (first_path, first) = *shards.first().ok_or("no shard reports given")?;
    let format_name = first.get("format").and_then(Value::as_str).unwrap_or("");
    let format: &'static dyn Format = format::by_name(format_name)
        .ok_or_else(|| format!("{}: unknown format {format_name:?}", first_path.display()))?;
    if let (Some((p, _)), Some((o, _))) = (
        shards.iter().find(|(_, r)| is_pair(r)),
        shards.iter().find(|(_, r)| !is_pair(r)),
    ) {
        return Err(format!(
            "{} and {}: not shards of the same check (a pair check and a one-input check)",
            p.display(),
            o.display()
        ));
    }
    let reference = frame(first);
    let mut ordered: BTreeMap<u64, Part> = BTreeMap::new();
    let mut count = 0;
    for &(path, report) in shards {
        let here = frame(report);
        if here != reference {
            let key = reference
                .as_object()
                .and_then(|m| m.iter().find(|(k, v)| here.get(k.as_str()) != Some(v)))
                .map_or("report".to_string(), |(k, _)| k.clone());
            return Err(format!(
                "{} and {}: not shards of the same check ({key} differs)",
                first_path.display(),
                path.display()
            ));
        }
        let part = read_part(path, report, format)?;
        count = part.shard.count;
        if let Some(other) = ordered.get(&part.shard.index) {
            return Err(format!(
                "shard {}/{count} given twice: {} and {}",
                part.shard.index,
                other.path.display(),
                path.display()
            ));
        }
        ordered.insert(part.shard.index, part);
    }
    super::all_shards_present(&ordered, count)?;
    let sweep: PairSweepId = serde_json::from_value(first["shard"]["sweep"].clone())
        .map_err(|e| format!("{}: unreadable shard.sweep: {e}", first_path.display()))?;
    if sweep.a_total > format.pattern_count() {
        return Err(format!(
            "{}: shard.sweep.a_total {} is more than the {} patterns of {}",
            first_path.display(),
            sweep.a_total,
            format.pattern_count(),
            format.name()
        ));
    }
    let mut acc = PairAcc::new(format);
    let mut crashes = Vec::new();
    let mut seconds = 0.0;
    for part in ordered.values() {
        let (from, to) = part.shard.bounds(sweep.a_total);
        let state = &part.state;
        // Parts of one sweep (same range, checked above) hold their share of its patterns of a.
        if state.a_count != to - from {
            return Err(format!(
                "{}: shard {}/{count} measured {} patterns of a, not its part {from}..{to} of the {} of the sweep",
                part.path.display(),
                part.shard.index,
                state.a_count,
                sweep.a_total
            ));
        }
        acc.join(&state.acc);
        crashes.extend(
            state
                .crashes
                .iter()
                .take(KEPT_CRASHES.saturating_sub(crashes.len()))
                .cloned(),
        );
        seconds += part
            .report
            .get("seconds")
            .and_then(Value::as_f64)
            .unwrap_or(0.0);
    }
    let text = |key: &str| {
        first
            .get(key)
            .and_then(Value::as_str)
            .unwrap_or("")
            .to_string()
    };
    let check = PairCheck {
        function: text("function"),
        role: text("role"),
        format,
        library: text("library"),
        symbol: text("symbol"),
        coverage: PairCoverage::Exhaustive {
            a_count: sweep.a_total,
        },
        part: None,
        acc,
        crashes,
        max_ulp: first
            .pointer("/verdict/max_ulp_limit")
            .and_then(Value::as_f64),
        allow_non_finite: first
            .pointer("/verdict/non_finite_allowed")
            .and_then(Value::as_bool)
            .unwrap_or(false),
        seconds,
    };
    let (code, reasons) = check.verdict();
    Ok((check.json(code, &reasons), check))
}
