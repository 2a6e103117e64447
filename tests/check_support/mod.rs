//! Helpers shared by the `check` integration tests.
#![allow(dead_code)]

use ulpgauge::activation::{lookup, Constants, Role};
use ulpgauge::check::{CheckConfig, CheckRole};
use ulpgauge::format::Format;
use ulpgauge::reference::{Evaluator, ParamRounding};
use ulpgauge::sweep::{InputRange, SampleMode, SweepKind, SweepSpec};

/// A config for an in-process check.
pub fn config(
    function: &str,
    format: &'static dyn Format,
    role: CheckRole,
    kinds: &[SweepKind],
    range: Option<&str>,
) -> CheckConfig {
    let range = match range {
        Some(text) => InputRange::parse(format, text).expect("range"),
        None => InputRange::all(format),
    };
    CheckConfig {
        function: lookup(function).expect("function"),
        format,
        input_format: format,
        role,
        params: Vec::new(),
        param_rounding: ParamRounding::Exact,
        sweep: SweepSpec {
            kinds: kinds.to_vec(),
            range,
            per_binade: 16,
            random_points: 2000,
            neighbours: 8,
            seed: 7,
            mode: SampleMode::Bits,
        },
        abs_floor: None,
        max_ulp: None,
        list_over: None,
        listed_runs: ulpgauge::measure::LISTED_RUNS,
        allow_non_finite: false,
        library: None,
        shard: None,
        symbol: None,
        progress: false,
        reference: ulpgauge::check::ReferencePath::Auto,
    }
}

/// The correctly rounded forward or derivative reference of a catalog function.
pub fn evaluator(function: &str, format: &'static dyn Format, role: Role) -> Evaluator<'static> {
    let f = lookup(function).expect("function");
    let c = Constants::resolve(f, &[], ParamRounding::Exact, format);
    Evaluator::new(f, role, c, format)
}

/// A fresh temporary folder for one test.
pub fn temp_dir(name: &str) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("ulpgauge-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}
