//! `merge`: joins the reports of the shards of one check (`check --shard I/N`) into the
//! report one unsharded run gives.
//!
//! Each shard report carries, under `shard.state`, what its part measured in mergeable form
//! (accumulators with exact sums, the points special-value rules and kinks read, crashes by
//! phase, the non-finite runs of its territory). The states are joined in part order and
//! turned into figures by the same code an unsharded check uses; the sections that do not
//! depend on the part (thresholds, probes, parameters, provenance) come from shard 1.
//! Every figure and verdict equals the unsharded run's; `kernel.ns_per_element` and
//! `provenance` are shard 1's.

pub mod pairs;

use crate::check::{Acceptance, Confirmation, Figures, Gathered, HygieneEntry, STATE_VERSION};
use crate::format::{self, Format};
use crate::report::model::SCHEMA;
use serde_json::{Map, Value};
use std::path::{Path, PathBuf};

/// One shard report as read: its file and its JSON.
pub struct ShardFile {
    /// Where it came from (for messages).
    pub path: PathBuf,
    /// The report (one kernel or a manifest run).
    pub value: Value,
}

/// The merged report(s).
pub struct Merged {
    /// The report in the shape the shards had: one object, or `{"schema", "kernels": […]}`.
    pub value: Value,
    /// Each kernel's merged report, in order.
    pub kernels: Vec<Value>,
    /// Whether the shards were manifest runs.
    pub manifest: bool,
    /// Each kernel's plot buckets (not part of the JSON), for the HTML report.
    pub plots: Vec<Vec<crate::measure::Bucket>>,
    /// Each kernel's merged pair check, for a gated kernel (`None` for a one-input one).
    pub pair_checks: Vec<Option<crate::report::pair_check::PairCheck>>,
}

/// Reads a shard report.
pub fn read(path: &Path) -> Result<ShardFile, String> {
    let text = std::fs::read_to_string(path)
        .map_err(|e| format!("cannot read {}: {e}", path.display()))?;
    let value: Value = serde_json::from_str(&text)
        .map_err(|e| format!("{}: not a JSON report: {e}", path.display()))?;
    Ok(ShardFile {
        path: path.to_path_buf(),
        value,
    })
}

/// The kernel reports of a file, and whether it is a manifest run.
fn kernels(file: &ShardFile) -> Result<(Vec<&Value>, bool), String> {
    let name = file.path.display();
    // A lone pair check's report has no schema key; it is one kernel.
    if pairs::is_pair(&file.value) {
        return Ok((vec![&file.value], false));
    }
    let schema = file.value.get("schema").and_then(Value::as_str);
    if schema != Some(SCHEMA) {
        return Err(format!(
            "{name}: schema {} is not {SCHEMA}",
            schema.map_or("missing".to_string(), |s| format!("{s:?}"))
        ));
    }
    match file.value.get("kernels") {
        Some(Value::Array(list)) => Ok((list.iter().collect(), true)),
        Some(_) => Err(format!("{name}: \"kernels\" is not a list")),
        None => Ok((vec![&file.value], false)),
    }
}

/// The keys of a kernel report that must agree between shards of one check.
fn frame(report: &Value) -> Value {
    let mut sweep = report.get("sweep").cloned().unwrap_or(Value::Null);
    if let Some(map) = sweep.as_object_mut() {
        map.remove("inputs");
        map.remove("extra_inputs");
        // Parts of a recorded set may differ in completeness; the merge says sampled then.
        map.remove("coverage");
    }
    let pick = |path: &[&str]| {
        path.iter()
            .try_fold(report, |v, k| v.get(k))
            .cloned()
            .unwrap_or(Value::Null)
    };
    serde_json::json!({
        "function": pick(&["function"]),
        "format": pick(&["format"]),
        "role": pick(&["role"]),
        "from_output": pick(&["from_output"]),
        "params": pick(&["params"]),
        "param_rounding": pick(&["param_rounding"]),
        "symbol": pick(&["kernel", "symbol"]),
        "library": pick(&["provenance", "library", "sha256"]),
        "abs_floor": pick(&["accuracy", "abs_floor", "floor"]),
        "max_ulp_limit": pick(&["verdict", "max_ulp_limit"]),
        "non_finite_allowed": pick(&["verdict", "non_finite_allowed"]),
        "sweep": sweep,
        "count": pick(&["shard", "count"]),
    })
}

/// The first differing key of two frames.
fn first_difference(a: &Value, b: &Value) -> String {
    if let (Some(a), Some(b)) = (a.as_object(), b.as_object()) {
        for (k, v) in a {
            if b.get(k) != Some(v) {
                return k.clone();
            }
        }
    }
    "report".into()
}

/// Merges the shards of one kernel (in any order).
fn merge_kernel(
    shards: &[(&Path, &Value)],
) -> Result<(Value, Vec<crate::measure::Bucket>), String> {
    let (first_path, first) = shards[0];
    let shard_of = |path: &Path, report: &Value| -> Result<(u64, u64), String> {
        let s = report.get("shard").ok_or_else(|| {
            format!(
                "{}: not a shard report (run check with --shard I/N)",
                path.display()
            )
        })?;
        let index = s.get("index").and_then(Value::as_u64);
        let count = s.get("count").and_then(Value::as_u64);
        match (index, count) {
            (Some(i), Some(n)) if i >= 1 && i <= n => Ok((i, n)),
            _ => Err(format!("{}: bad \"shard\" index/count", path.display())),
        }
    };
    let (_, count) = shard_of(first_path, first)?;
    let reference = frame(first);
    // Parts by index: the count read from a file sizes nothing.
    let mut ordered: std::collections::BTreeMap<u64, (&Path, &Value)> = Default::default();
    for &(path, report) in shards {
        let (index, _) = shard_of(path, report)?;
        let here = frame(report);
        if here != reference {
            return Err(format!(
                "{} and {}: not shards of the same check ({} differs)",
                first_path.display(),
                path.display(),
                first_difference(&reference, &here)
            ));
        }
        if let Some((other, _)) = ordered.get(&index) {
            return Err(format!(
                "shard {index}/{count} given twice: {} and {}",
                other.display(),
                path.display()
            ));
        }
        ordered.insert(index, (path, report));
    }
    all_shards_present(&ordered, count)?;
    let ordered: Vec<(&Path, &Value)> = ordered.into_values().collect();

    let format_name = first.get("format").and_then(Value::as_str).unwrap_or("");
    let format: &'static dyn Format = format::by_name(format_name)
        .ok_or_else(|| format!("{}: unknown format {format_name:?}", first_path.display()))?;
    for &(path, report) in &ordered {
        let version = report["shard"].get("state_version").and_then(Value::as_u64);
        if version != Some(u64::from(STATE_VERSION)) {
            let written = version.map_or("none".to_string(), |v| v.to_string());
            return Err(format!(
                "{}: shard state version {written}, this build reads {STATE_VERSION} (run every shard with one ulpgauge build)",
                path.display()
            ));
        }
    }
    let mut states = ordered.iter().map(|&(path, report)| {
        let state = report
            .get("shard")
            .and_then(|s| s.get("state"))
            .cloned()
            .ok_or_else(|| format!("{}: the shard has no state", path.display()))?;
        let read = || {
            let g = serde_json::from_value::<Gathered>(state.clone())
                .map_err(|e| format!("{}: unreadable shard state: {e}", path.display()))?;
            g.validate(format)
                .map_err(|e| format!("{}: bad shard state field {e}", path.display()))?;
            Ok::<Gathered, String>(g)
        };
        let stated = report.pointer("/sweep/inputs").and_then(Value::as_u64);
        let state = read()?;
        if stated != Some(state.inputs) {
            return Err(format!(
                "{}: the shard state measured {} inputs, the report's sweep.inputs says {}",
                path.display(),
                state.inputs,
                stated.map_or("nothing".to_string(), |n| n.to_string())
            ));
        }
        agrees_with_report(path, report, state, format)?;
        Ok((path, read()?))
    });
    let (_, mut gathered) = states.next().ok_or("no shard reports given")??;
    let mut total_inputs = gathered.inputs;
    for state in states {
        let (path, state) = state?;
        gathered
            .joinable(&state)
            .map_err(|e| format!("{}: shard state field {e}", path.display()))?;
        total_inputs += state.inputs;
        if total_inputs > format.pattern_count() {
            return Err(format!(
                "{}: the shards measured {total_inputs} inputs, more than the {} patterns of {}",
                path.display(),
                format.pattern_count(),
                format.name()
            ));
        }
        gathered.merge(state);
    }
    let recorded = gathered.recorded.clone();
    let hygiene = match &recorded {
        Some(r) => r.determinism(format).into_iter().collect(),
        None => merged_hygiene(&ordered)?,
    };
    // Each shard confirmed its own extremes; the merged ones are among them.
    let mut reference_check = Confirmation::default();
    for (path, report) in &ordered {
        let c: Confirmation =
            serde_json::from_value(report["provenance"]["reference_check"].clone())
                .map_err(|e| format!("{}: unreadable reference_check: {e}", path.display()))?;
        reference_check.merge(c);
    }
    let figures = gathered.figures(format, format, &mut crate::measure::NoSink);
    let stated = |key: &str| first.get("verdict").and_then(|v| v.get(key));
    let verdict = figures.verdict(
        format,
        &hygiene,
        &reference_check.disagreements,
        Acceptance {
            max_ulp: stated("max_ulp_limit").and_then(Value::as_f64),
            allow_non_finite: stated("non_finite_allowed")
                .and_then(Value::as_bool)
                .unwrap_or(false),
        },
    );
    let Figures {
        accuracy,
        non_finite,
        non_finite_total,
        non_finite_summary,
        special_values,
        kinks,
        shape,
        reference_failures,
        crash,
        extra_inputs,
    } = figures;
    let inputs = ordered
        .iter()
        .map(|(_, r)| r["sweep"]["inputs"].as_u64().unwrap_or(0))
        .sum::<u64>();

    let mut report = first.clone();
    let map = report.as_object_mut().ok_or("a report is not an object")?;
    map.remove("shard");
    let sampled = Value::from("sampled");
    let coverage = match &recorded {
        Some(r) if !r.complete => sampled.clone(),
        _ if ordered
            .iter()
            .any(|(_, r)| r["accuracy"]["coverage"] == sampled) =>
        {
            sampled.clone()
        }
        _ => first["accuracy"]["coverage"].clone(),
    };
    set(map, &["sweep", "coverage"], coverage.clone());
    set(map, &["provenance", "sweep", "coverage"], coverage.clone());
    if let Some(r) = &recorded {
        let thresholds: Vec<_> = r.walks.iter().map(|w| w.report(format)).collect();
        map.insert("thresholds".into(), to_value(&thresholds)?);
        map.insert(
            "recorded".into(),
            to_value(&r.section(format, coverage == sampled))?,
        );
    }
    let mut accuracy_value = to_value(&accuracy)?;
    if let Some(a) = accuracy_value.as_object_mut() {
        a.insert("coverage".into(), coverage);
    }
    let points = accuracy.points;
    map.insert("accuracy".into(), accuracy_value);
    map.insert("non_finite".into(), to_value(&non_finite)?);
    map.insert("non_finite_total".into(), to_value(&non_finite_total)?);
    map.insert("non_finite_summary".into(), to_value(&non_finite_summary)?);
    map.insert("special_values".into(), to_value(&special_values)?);
    map.insert("kinks".into(), to_value(&kinks)?);
    map.insert("shape".into(), to_value(&shape)?);
    map.insert("reference_failures".into(), to_value(&reference_failures)?);
    map.insert("crash".into(), to_value(&crash)?);
    map.insert("hygiene".into(), to_value(&hygiene)?);
    map.insert("verdict".into(), to_value(&verdict)?);
    set(map, &["sweep", "inputs"], Value::from(inputs));
    set(map, &["sweep", "extra_inputs"], Value::from(extra_inputs));
    set(map, &["provenance", "sweep", "points"], Value::from(points));
    set(map, &["provenance", "sweep", "inputs"], Value::from(inputs));
    set(
        map,
        &["provenance", "reference_check"],
        to_value(&reference_check)?,
    );
    Ok((report, accuracy.buckets))
}

/// A report section as a JSON value.
fn to_value<T: serde::Serialize>(section: &T) -> Result<Value, String> {
    serde_json::to_value(section).map_err(|e| e.to_string())
}

/// Sets a nested key that exists in the template.
fn set(map: &mut Map<String, Value>, path: &[&str], value: Value) {
    let (last, parents) = path.split_last().expect("a path");
    let mut here = map;
    for key in parents {
        match here.get_mut(*key).and_then(Value::as_object_mut) {
            Some(next) => here = next,
            None => return,
        }
    }
    here.insert(last.to_string(), value);
}

/// Every shard ran the same hygiene checks on the same sample; a check counts as failed when
/// it failed in any shard (the first such shard's entry is kept), as one run would have
/// shown it failing on some run.
fn merged_hygiene(ordered: &[(&Path, &Value)]) -> Result<Vec<HygieneEntry>, String> {
    let lists = ordered
        .iter()
        .map(|(path, report)| {
            serde_json::from_value::<Vec<HygieneEntry>>(report["hygiene"].clone())
                .map_err(|e| format!("{}: unreadable hygiene: {e}", path.display()))
        })
        .collect::<Result<Vec<_>, String>>()?;
    let mut merged = lists[0].clone();
    for entry in &mut merged {
        if let Some(failed) = lists
            .iter()
            .flat_map(|l| l.iter())
            .find(|h| h.check == entry.check && !h.passed)
        {
            *entry = failed.clone();
        }
    }
    Ok(merged)
}

/// Whether a shard's state gives the figures its own report states: a state edited or
/// corrupted apart from its report is refused before it can flow into merged figures.
fn agrees_with_report(
    path: &Path,
    report: &Value,
    state: Gathered,
    format: &'static dyn Format,
) -> Result<(), String> {
    let figures = state.figures(format, format, &mut crate::measure::NoSink);
    let checks: [(&str, Value, Option<&Value>); 4] = [
        (
            "accuracy.points",
            Value::from(figures.accuracy.points),
            report.pointer("/accuracy/points"),
        ),
        (
            "accuracy.max_ulp",
            Value::from(figures.accuracy.max_ulp),
            report.pointer("/accuracy/max_ulp"),
        ),
        (
            "non_finite_total.runs",
            Value::from(figures.non_finite_total.runs),
            report.pointer("/non_finite_total/runs"),
        ),
        (
            "non_finite_total.inputs",
            Value::from(figures.non_finite_total.inputs),
            report.pointer("/non_finite_total/inputs"),
        ),
    ];
    for (key, from_state, stated) in checks {
        let same = match (stated.and_then(Value::as_f64), from_state.as_f64()) {
            (Some(a), Some(b)) => a == b,
            _ => false,
        };
        if !same {
            return Err(format!(
                "{}: the shard state does not give the report's {key} ({} in the report, {from_state} from the state)",
                path.display(),
                stated.map_or("nothing".to_string(), Value::to_string)
            ));
        }
    }
    Ok(())
}

/// Joins shard files: every file must hold the same kernels (one, or a manifest's list) and
/// together they must hold each shard 1..=N of each kernel exactly once. A corrupted state
/// that slips past validation and trips an internal assertion is refused like any other bad
/// input: one line, never a panic.
pub fn merge(files: &[ShardFile]) -> Result<Merged, String> {
    let hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let result = std::panic::catch_unwind(|| merge_checked(files));
    std::panic::set_hook(hook);
    // User text quoted in a message stays on the message's one line.
    let result = result.map(|r| r.map_err(|e| e.replace('\n', "\\n").replace('\r', "\\r")));
    result.unwrap_or_else(|panic| {
        let why = panic
            .downcast_ref::<String>()
            .cloned()
            .or_else(|| panic.downcast_ref::<&str>().map(|s| s.to_string()))
            .unwrap_or_default();
        Err(format!(
            "the shard states are inconsistent and cannot be merged ({})",
            why.lines().next().unwrap_or("internal check failed")
        ))
    })
}

fn merge_checked(files: &[ShardFile]) -> Result<Merged, String> {
    let first = files.first().ok_or("no shard reports given")?;
    let (first_kernels, manifest) = kernels(first)?;
    if first_kernels.is_empty() {
        return Err(format!(
            "{}: \"kernels\" is empty: nothing to merge",
            first.path.display()
        ));
    }
    let mut per_kernel: Vec<Vec<(&Path, &Value)>> = vec![Vec::new(); first_kernels.len()];
    for file in files {
        let (list, is_manifest) = kernels(file)?;
        if is_manifest != manifest || list.len() != first_kernels.len() {
            return Err(format!(
                "{} and {}: not shards of the same check (different kernels)",
                first.path.display(),
                file.path.display()
            ));
        }
        for (k, report) in list.into_iter().enumerate() {
            per_kernel[k].push((file.path.as_path(), report));
        }
    }
    let mut kernels = Vec::new();
    let mut plots = Vec::new();
    let mut pair_checks = Vec::new();
    for shards in &per_kernel {
        if shards.iter().any(|(_, r)| pairs::is_pair(r)) {
            let (value, check) = pairs::merge_pair_kernel(shards)?;
            kernels.push(value);
            plots.push(Vec::new());
            pair_checks.push(Some(check));
        } else {
            let (value, buckets) = merge_kernel(shards)?;
            kernels.push(value);
            plots.push(buckets);
            pair_checks.push(None);
        }
    }
    let value = if manifest {
        serde_json::json!({ "schema": SCHEMA, "kernels": kernels })
    } else {
        kernels[0].clone()
    };
    Ok(Merged {
        value,
        kernels,
        manifest,
        plots,
        pair_checks,
    })
}

/// Err naming the first few missing parts ("missing shard(s) 2/8, 5/8 and 3 more") unless
/// every shard 1..=count is in `ordered`.
fn all_shards_present<T>(
    ordered: &std::collections::BTreeMap<u64, T>,
    count: u64,
) -> Result<(), String> {
    if ordered.len() as u64 == count {
        return Ok(());
    }
    // The first few missing parts: at most one per part given, plus ten, to walk.
    let missing: Vec<String> = (1..=count)
        .filter(|i| !ordered.contains_key(i))
        .take(10)
        .map(|i| format!("{i}/{count}"))
        .collect();
    let more = count - ordered.len() as u64 - missing.len() as u64;
    Err(format!(
        "missing shard(s) {}{}",
        missing.join(", "),
        if more > 0 {
            format!(" and {more} more")
        } else {
            String::new()
        }
    ))
}
