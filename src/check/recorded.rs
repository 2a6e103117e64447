//! Checks of recorded outputs: a recorded set stands in for the kernel and answers only for
//! the inputs it holds. The sweep is the set's inputs, the probes are those recorded, gap scans
//! reach only recorded inputs and the thresholds are walked over them; hygiene and throughput
//! need calls and are not run (the report says so).

use super::{assemble, gather, CheckConfig, CheckRole, KernelOutput, KernelUnderTest, Prober};
use super::{HygieneEntry, Setup};
use crate::format::{hex, Layout};
use crate::measure::{Point, Probe};
use crate::recorded::{Recorded, RecordedState, ThresholdWalk};
use crate::report::model::CheckReport;
use crate::sweep::{Coverage, InputRange, Inputs};

/// A recorded set as a [`KernelUnderTest`]: looked up by x whatever the role (the check calls
/// it with x), and walking the kernel's thresholds over the measured inputs as they stream by.
struct RecordedKernel {
    set: Recorded,
    layout: Layout,
    range: InputRange,
    walks: Vec<ThresholdWalk>,
    gradient: bool,
    /// The first lookup that failed (a read error, or an input the set does not hold).
    error: Option<String>,
}

impl KernelUnderTest for RecordedKernel {
    fn run(&mut self, first: &[u32], _second: Option<&[u32]>) -> KernelOutput {
        let mut outputs = Vec::with_capacity(first.len());
        let mut seconds = Vec::with_capacity(if self.gradient { first.len() } else { 0 });
        let format = self.set.format();
        for &x in first {
            let answer = match self.set.get(x) {
                Ok(Some(a)) => Some(a),
                Ok(None) => {
                    self.error.get_or_insert_with(|| {
                        format!("internal: input {} is not recorded", hex(format, x))
                    });
                    None
                }
                Err(e) => {
                    self.error.get_or_insert(e);
                    None
                }
            };
            if self.range.contains(format, x) {
                for w in &mut self.walks {
                    w.see(self.layout, x, answer.map(|a| a.0));
                }
            }
            outputs.push(answer.map(|a| a.0));
            if self.gradient {
                seconds.push(answer.and_then(|a| a.1));
            }
        }
        KernelOutput {
            outputs,
            crashes: Vec::new(),
            seconds: self.gradient.then_some(seconds),
        }
    }

    fn hygiene(&mut self, _sample: &[u32], _second: Option<&[u32]>) -> Vec<HygieneEntry> {
        Vec::new()
    }

    fn ns_per_element(&mut self, _sample: &[u32], _second: Option<&[u32]>) -> Option<f64> {
        None
    }
}

/// A [`Probe`] that evaluates only the inputs a recorded set holds and drops the others.
pub(super) struct PresentOnly<'p, 'a> {
    /// The check's prober.
    pub prober: &'p mut Prober<'a>,
    /// Whether an input was recorded.
    pub present: &'p dyn Fn(u32) -> bool,
}

impl Probe for PresentOnly<'_, '_> {
    fn probe(&mut self, inputs: &[u32]) -> Vec<Point> {
        let kept: Vec<u32> = inputs
            .iter()
            .copied()
            .filter(|&x| (self.present)(x))
            .collect();
        self.prober.probe(&kept)
    }
}

/// Checks a recorded set: the same measures and report as a check of a called kernel
/// wherever they apply. With `--shard I/N` the set is part I of N (as `ulpgauge inputs --shard`
/// writes it), measured whole and labelled for `merge`.
pub fn run_recorded(mut set: Recorded, config: &CheckConfig) -> Result<CheckReport, String> {
    let format = config.format;
    let mut setup = Setup::new(config)?;
    let measured = set.take_measured()?;
    let survey = set.survey().clone();
    // Complete: every pattern of the range, or exactly this part's slice of them.
    let complete = match config.shard {
        None => survey.exhaustive,
        Some(s) => {
            let whole = Inputs::of_range(format, &config.sweep.range);
            let (from, to) = s.bounds(whole.len());
            measured == whole.slice(from, to)
        }
    };
    setup.plan.measured = measured;
    setup.plan.coverage = if complete {
        Coverage::Exhaustive
    } else {
        Coverage::Sampled
    };
    let planned = setup.probes.len() as u64;
    let mut present = Vec::new();
    for &p in &setup.probes {
        if set.contains(p)? {
            present.push(p);
        }
    }
    setup.probes = present;
    let gradient = matches!(config.role, CheckRole::Gradient { .. });
    if gradient {
        // The set is looked up by x; a kernel working from f(x) recorded its x all the same.
        setup.refs.role = CheckRole::Gradient { from_output: false };
    }
    let walks = setup
        .role_thresholds
        .iter()
        .map(|t| ThresholdWalk::new(t, !gradient))
        .collect();
    let files = set.files();
    let mut kernel = RecordedKernel {
        set,
        layout: format.layout(),
        range: config.sweep.range.clone(),
        walks,
        gradient,
        error: None,
    };
    let (mut gathered, _) = {
        let mut prober = Prober::new(&mut kernel, &setup.refs, config.progress);
        gather(&mut prober, &setup, config, true)
    };
    if let Some(e) = kernel.error {
        return Err(e);
    }
    let mut state = RecordedState::new(files, &survey, complete);
    state.probes = (planned, setup.probes.len() as u64);
    state.walks = kernel.walks;
    let thresholds = state.walks.iter().map(|w| w.report(format)).collect();
    let hygiene = state.determinism(format).into_iter().collect();
    gathered.recorded = Some(state);
    assemble::report(config, &setup, gathered, thresholds, hygiene, None)
}
