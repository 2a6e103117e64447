//! The last step of a check: from what was gathered to the report's sections, the verdict and
//! the provenance.

use super::{confirm, Acceptance, CheckConfig, CheckRole, Figures, Gathered, Setup, STATE_VERSION};
use crate::measure::ThresholdReport;
use crate::reference::Real;
use crate::report::model::*;
use crate::report::provenance::{cpu_info, gmp_version, library_info, mpfr_version, utc_now};
use crate::report::BitsValue;
use crate::sweep::SweepKind;

/// The report of a check from its gathered state, thresholds and the kernel's hygiene and
/// speed.
#[allow(clippy::too_many_arguments)] // each is one section's source, handed over once
pub(super) fn report(
    config: &CheckConfig,
    setup: &Setup,
    mut gathered: Gathered,
    thresholds: Vec<ThresholdReport>,
    mut hygiene: Vec<HygieneEntry>,
    ns_per_element: Option<f64>,
    neighbourhoods: Vec<crate::measure::Neighbourhood>,
    sink: &mut dyn crate::measure::FindingSink,
) -> Result<CheckReport, String> {
    let format = config.format;
    let input = config.input_format;
    let function = config.function;
    let spec = &config.sweep;
    for h in &mut hygiene {
        h.message = crate::report::sentence::hygiene(format, &h.check, h.passed, &h.detail);
    }
    let plan = &setup.plan;
    let own_inputs = gathered.inputs;
    let recorded = gathered
        .recorded
        .as_ref()
        .map(|r| r.section(format, plan.coverage == crate::sweep::Coverage::Sampled));
    let planned_probes = gathered
        .recorded
        .as_ref()
        .map_or(setup.probes.len() as u64, |r| r.probes.0);
    let shard = match config.shard {
        None => None,
        Some(s) => {
            gathered.stream.make_portable();
            let state = serde_json::to_value(&gathered).map_err(|e| e.to_string())?;
            Some(ShardSection {
                index: s.index,
                count: s.count,
                state_version: STATE_VERSION,
                state,
            })
        }
    };
    let figures = gathered.figures(input, format, sink);
    let extremes = confirm::extremes(input, &figures.accuracy, &figures.non_finite, &thresholds);
    let reference_check = confirm::confirm(&setup.refs, input, &extremes);
    let verdict = figures.verdict(
        input,
        &hygiene,
        &reference_check.disagreements,
        Acceptance {
            max_ulp: config.max_ulp,
            allow_non_finite: config.allow_non_finite,
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
    let sweep_info = SweepInfo {
        kinds: spec.kinds.clone(),
        range: spec.range.text.clone(),
        coverage: plan.coverage,
        inputs: own_inputs,
        probes: planned_probes,
        extra_inputs,
        per_binade: spec.per_binade,
        neighbours: spec.neighbours,
        random_points: spec
            .kinds
            .contains(&SweepKind::Random)
            .then_some(spec.random_points),
        random_mode: spec.kinds.contains(&SweepKind::Random).then_some(spec.mode),
        seed: spec.seed,
        interesting: plan
            .interesting
            .iter()
            .map(|i| InterestingPoint {
                input: BitsValue::new(input, i.input),
                what: i.what.clone(),
            })
            .collect(),
    };
    let params = setup
        .constants
        .entries()
        .iter()
        .map(|(name, value)| {
            let text = match value {
                Real::Exact(q) => q.to_string(),
                Real::Irrational(name, _) => name.to_string(),
            };
            (name.to_string(), text)
        })
        .collect();
    let provenance = Provenance {
        ulpgauge: env!("CARGO_PKG_VERSION"),
        mpfr: mpfr_version(),
        gmp: gmp_version(),
        library: config.library.as_deref().map(library_info),
        cpu: cpu_info(),
        date: utc_now(),
        reference_check,
        sweep: serde_json::json!({
            "kinds": sweep_info.kinds,
            "coverage": sweep_info.coverage,
            "points": accuracy.points,
            "inputs": sweep_info.inputs,
        }),
    };
    Ok(CheckReport {
        schema: SCHEMA,
        function: function.name().to_string(),
        format: format.name(),
        input_format: input.name(),
        output_format: format.name(),
        role: config.role.report_name().to_string(),
        from_output: matches!(config.role, CheckRole::Gradient { from_output: true }),
        params,
        param_rounding: config.param_rounding,
        kernel: KernelInfo {
            library: config.library.as_ref().map(|p| p.display().to_string()),
            symbol: config.symbol.clone(),
            ns_per_element,
            signature: None,
            strides: None,
        },
        sweep: sweep_info,
        accuracy: AccuracySection {
            figures: accuracy,
            coverage: plan.coverage,
        },
        non_finite,
        non_finite_total,
        non_finite_summary,
        special_values,
        hygiene,
        crash,
        thresholds,
        kinks,
        shape,
        neighbourhoods,
        reference_failures,
        verdict,
        provenance,
        shard,
        recorded,
        caller_fpenv: None,
        variants: None,
    })
}

/// The centres of the report's neighbourhoods: the function's kinks, and each threshold of
/// the reference and (when elsewhere) of the kernel.
pub(super) fn neighbourhood_centres(
    format: &dyn crate::format::Format,
    interesting: &[crate::sweep::Interesting],
    thresholds: &[ThresholdReport],
) -> Vec<(u32, String)> {
    let mut centres: Vec<(u32, String)> = interesting
        .iter()
        .filter(|i| i.what == "kink")
        .map(|i| (i.input, "kink".to_string()))
        .collect();
    let bits = |v: &BitsValue| crate::format::parse_hex(format, &v.bits).ok();
    for t in thresholds {
        let kind = format!("{:?} threshold ({})", t.kind, t.side).to_lowercase();
        let reference = t.reference.as_ref().and_then(bits);
        let kernel = t.kernel.as_ref().and_then(bits);
        if let Some(r) = reference {
            centres.push((r, format!("{kind} of the reference")));
        }
        if let Some(k) = kernel {
            // A kernel threshold within the reference's window is already shown there.
            let near =
                reference.is_some_and(|r| (format.ordinal(r) - format.ordinal(k)).abs() <= 8);
            if !near && format.to_f64(k).is_finite() {
                centres.push((k, format!("{kind} of the kernel")));
            }
        }
    }
    centres.retain(|(c, _)| format.to_f64(*c).is_finite());
    centres
}
