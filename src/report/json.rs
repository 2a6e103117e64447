//! JSON reports, schema `ulpgauge-check/2`.
//!
//! A single-kernel run writes one object; a manifest run writes `{"kernels": [object, …]}`.
//! Every input or output value is `{"bits": "0x…", "value": number | "nan" | "inf" | "-inf"}`
//! (written V below). Top-level keys of an object:
//!
//! - `schema`: "ulpgauge-check/2"; `function`, `format`, `role` ("forward" | "derivative" |
//!   "gradient"), `from_output`, `params` (name → exact value or constant name),
//!   `param_rounding`; `input_format` and `output_format` (added within version 2): the
//!   formats of x (and g) and of the outputs, equal unless the kernel mixes formats, and then
//!   `format` is the output format. Every input value (worst input, binade rows, runs,
//!   thresholds, rules) is in the input format, every output and reference value and every
//!   ulp in the output format.
//! - `kernel`: {library, symbol, ns_per_element}.
//! - `sweep`: {kinds, range, coverage ("exhaustive" | "sampled"), inputs, probes, extra_inputs,
//!   per_binade, neighbours, random_points, random_mode, seed, interesting: [{input: V, what}]}.
//! - `accuracy`: over finite inputs whose kernel output and reference are both finite (edge
//!   probes excluded): {points, max_ulp, worst: {input, output, reference: V, exact, ulp} |
//!   null, mean_ulp, rms_ulp (exact sums), correctly_rounded, faithful (fractions),
//!   histogram: [{up_to: number | null, count}], per_binade: [{binade, first, last: V, points,
//!   max_ulp, mean_ulp, correctly_rounded, worst_input: V}], regions: [{region, points, max_ulp,
//!   max_floored}], abs_floor: {floor, max, worst} | null, flush_to_zero_outputs,
//!   excluded_non_finite, points_over_limit (with `--csv-points-over`: how many points were
//!   listed), coverage, rounding: {other_neighbour, toward_zero, away_from_zero, up, down,
//!   nearest_ties_away, rule, message}}. In derivative and gradient roles the figures are the
//!   derivative's; at a kink the nearer one-sided value is used. `rounding` (added within
//!   version 2: readers must not require it) counts the points whose output is the other
//!   neighbour of y (one step off RN(y), on y's far side) by each rule that gives it (a point
//!   counts under two or three); `rule` ("toward-zero" | "nearest-ties-away" | "down" | "up" |
//!   "away-from-zero" | null) names the one that explains ≥ 95% of them when there are at
//!   least 10, and `message` says it in a sentence ("the outputs look truncated: 49.8% of the
//!   points were rounded toward zero …", the percentage over `points`).
//! - `non_finite`: the listed runs, at most `--list-runs` (default 100): [{first, last: V,
//!   count, kernel, reference ("nan" | "+inf" | "-inf" | "finite"), exact_ends, interior
//!   ("exhaustive" | "sampled"), message}], the longest first, ties to the lowest first bit pattern (a
//!   total order, so sharded and unsharded runs list the same runs). A run is maximal: the
//!   consecutive inputs (in bit order, one sign) where kernel and reference stay in the same
//!   two different classes.
//! - `non_finite_total`: {runs, inputs}: exact counts over every run of the sweep, whatever
//!   is listed (a run that crosses a shard boundary counts once).
//! - `non_finite_summary`: every run counted per sign × binade of the input × kind, in bit
//!   order: [{binade ("+2^70", "-subnormal", "+inf/nan"), kernel, reference, runs (those that
//!   start in the binade), inputs (the binade's inputs inside runs), first, last: V}].
//!
//! Version 2 (this one) replaced version 1's complete list of runs, which grew with the
//! findings, by the bounded `non_finite` listing plus `non_finite_total` and
//! `non_finite_summary`; `compare` reads both versions.
//! - `special_values`: [{input, expected: V, output: V | null, passed, rule, message}].
//! - `hygiene`: [{check, passed, detail, message}] from the kernel runner (the six checks; a
//!   strided kernel's five `stride-*` checks after them).
//! - Every `message` is the finding in a sentence: what went in, what came out and what was
//!   expected ("f(65504) = NaN (0x7e00); the reference is 65504 (0x7bff)"); the verdict's
//!   `failed` lines are these sentences.
//! - `crash`: null, or {signal, input: V, count}; `signal` is a signal name ("SIGSEGV"), "hang",
//!   "out of memory: …", "channel: …", or a failure that "depends on call history" (naming its batch).
//! - `thresholds`: [{side ("+" | "-"), kind ("saturation" | "overflow"), asymptote: V,
//!   reference: V | null, reference_confirmed, kernel: V | null, kernel_confirmed, kernel_class,
//!   kernel_minus_reference_steps, message}].
//! - `neighbourhoods`: [{what, centre: V, points: [{input, output: V | null, reference: V,
//!   left: V | null, ulp}]}]: 8 inputs on each side of every kink and threshold (the
//!   reference's and, when elsewhere, the kernel's), shown beside the figures (the HTML
//!   report's small plots), never counted in them.
//! - `kinks`: derivative roles, [{input, left, right: V, output: V | null, uses ("left" |
//!   "right" | "either" | "neither"), ulp}].
//! - `shape`: forward role, {monotone_function, monotonicity_violations, violations: [{from, to,
//!   from_output, to_output: V}], jump_count, jumps: [{from, to: V, kernel_steps,
//!   reference_steps}]}; null otherwise.
//! - `reference_failures`: {count, inputs: [V], first_message}: inputs left out because the
//!   reference engine could not decide their rounding.
//! - `verdict`: {exit_code (0 | 1 | 3), failed: [text], max_ulp_limit, non_finite_allowed}:
//!   any non-finite run fails it unless `--allow-non-finite` was given.
//! - `provenance`: {ulpgauge, mpfr, gmp, library: {path, sha256, compiler} | null, cpu: {model,
//!   features}, date, sweep: {kinds, coverage, points, inputs}, reference_check:
//!   {confirmed_with_mpfr, disagreements: [V]}} — with `--reference auto`, every extreme the
//!   report names (worst inputs, per-binade worst inputs, non-finite run ends, the reference's
//!   thresholds and the inputs just before them) recomputed with MPFR alone; a disagreement
//!   fails the verdict.
//! - `shard` (only in the report of a `check --shard I/N` run): {index, count, state}; `state`
//!   is what `ulpgauge merge` joins (the serialised [`crate::check::Gathered`]: accumulators,
//!   kept points, probe points, crashes by phase, non-finite runs of the part); its layout is
//!   internal to one ulpgauge version. The other keys then describe the shard's part only
//!   (`sweep.inputs` counts its measured inputs).
//! - `recorded` (only for `check --inputs/--outputs`): {files: [{array ("inputs" | "outputs" |
//!   "grads"), path, dtype}], entries, distinct_inputs, outside_range, repeated,
//!   non_deterministic: {inputs, examples: [[input, measured output, other output: V]]},
//!   not_run: [{measure, why}], limited_to_recorded: [{measure, why}]}. Then `sweep.kinds` is
//!   ["recorded"], `hygiene` holds at most the `determinism` check the repeats allow,
//!   `kernel.ns_per_element` is null, and the kernel's `thresholds` are walked over the
//!   recorded inputs.
//! - `caller_fpenv` (only with `check --caller-fpenv` or a manifest entry's `caller-fpenv`):
//!   {environment: [names], register ("MXCSR" | "FPCR"), default_word, caller_word ("0x…"),
//!   outputs: C, default_verdict: {exit_code, failed, max_ulp, non_finite_runs},
//!   verdict_changed, message}. The report's other keys are the caller's environment's run;
//!   C compares the default run (`first`) with the caller's (`second`).
//! - `variants` (only in the first variant's report of a manifest entry with `variants`, or of
//!   `--cpu-mask` given more than once): {variants: [{name, symbol, cpu_mask, max_ulp,
//!   mean_ulp, correctly_rounded, non_finite_runs, ns_per_element, exit_code}], agree, pairs:
//!   [{first, second (variant names), outputs: C}], message}; disagreement fails the verdict.
//! - C, two runs compared over the measured inputs and edge probes: {compared, differing,
//!   first_differences: [{input, first, second: V | null}] (at most 8, in bit order),
//!   at_subnormal_inputs, outputs_flushed (subnormal in the first run, zero in the second),
//!   inputs_read_as_zero (subnormal inputs whose second-run output is that of the zero of their
//!   sign, while the first run's was not; forward and derivative roles)}. NaNs compare equal
//!   whatever their payload; counts are exact.

use super::{CheckReport, ReportFormat};

/// The JSON output.
pub struct Json;

impl ReportFormat for Json {
    fn name(&self) -> &'static str {
        "json"
    }
    fn render(&self, reports: &[CheckReport], manifest: bool) -> Result<String, String> {
        let value = if manifest {
            serde_json::json!({ "schema": super::model::SCHEMA, "kernels": reports })
        } else {
            serde_json::to_value(reports.first().ok_or("no report")?).map_err(|e| e.to_string())?
        };
        let mut text = serde_json::to_string_pretty(&value).map_err(|e| e.to_string())?;
        text.push('\n');
        Ok(text)
    }
}
