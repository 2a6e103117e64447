//! Checks of recorded outputs: a recorded set stands in for the kernel and answers only for
//! the inputs it holds. The sweep is the set's inputs, the probes are those recorded, gap scans
//! reach only recorded inputs and the thresholds are walked over them; hygiene and throughput
//! need calls and are not run (the report says so).

use super::{assemble, gather, CheckConfig, CheckRole, KernelOutput, KernelUnderTest, Prober};
use super::{HygieneEntry, Setup, Shard};
use crate::format::{hex, Layout};
use crate::measure::{FindingSink, Point, Probe};
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
    prober: &'p mut Prober<'a>,
    measured: &'p Inputs,
    probes: &'p [u32],
    /// Inputs evaluated (the recorded ones among those asked).
    pub evaluated: u64,
}

impl<'p, 'a> PresentOnly<'p, 'a> {
    /// Probes through `prober` the inputs among `measured` and `probes` (sorted).
    pub fn new(prober: &'p mut Prober<'a>, measured: &'p Inputs, probes: &'p [u32]) -> Self {
        PresentOnly {
            prober,
            measured,
            probes,
            evaluated: 0,
        }
    }

    /// The recorded inputs among `inputs`; a consecutive stretch (a gap scan's chunk) is
    /// intersected run by run rather than input by input.
    fn present(&self, inputs: &[u32]) -> Vec<u32> {
        let (Some(&lo), Some(&hi)) = (inputs.first(), inputs.last()) else {
            return Vec::new();
        };
        let stretch = hi >= lo && (hi - lo) as usize + 1 == inputs.len();
        if !stretch {
            return inputs
                .iter()
                .copied()
                .filter(|&x| self.measured.contains(x) || self.probes.binary_search(&x).is_ok())
                .collect();
        }
        let runs = self.measured.runs();
        let mut kept: Vec<u32> = runs[runs.partition_point(|&(_, b)| b < lo)..]
            .iter()
            .take_while(|&&(a, _)| a <= hi)
            .flat_map(|&(a, b)| a.max(lo)..=b.min(hi))
            .collect();
        let from = self.probes.partition_point(|&p| p < lo);
        kept.extend(self.probes[from..].iter().take_while(|&&p| p <= hi));
        kept.sort_unstable();
        kept.dedup();
        kept
    }
}

impl Probe for PresentOnly<'_, '_> {
    fn probe(&mut self, inputs: &[u32]) -> Vec<Point> {
        let kept = self.present(inputs);
        self.evaluated += kept.len() as u64;
        self.prober.probe(&kept)
    }
}

/// The territory of a recorded part: its own inputs, from the first pattern for the first
/// part (or an unsharded set) to the last pattern for the last one, so that the parts' runs
/// join in `merge` as one pass over every recorded input would find them.
pub(super) fn territory(shard: Option<Shard>, measured: &Inputs) -> std::ops::RangeInclusive<u32> {
    let (index, count) = shard.map_or((1, 1), |s| (s.index, s.count));
    let first = if index == 1 { Some(0) } else { measured.nth(0) };
    let last = if index == count {
        Some(u32::MAX)
    } else {
        measured.len().checked_sub(1).and_then(|i| measured.nth(i))
    };
    match (first, last) {
        (Some(f), Some(l)) => f..=l,
        // Deliberately empty: a part without inputs owns no patterns.
        #[allow(clippy::reversed_empty_ranges)]
        _ => 1..=0,
    }
}

/// Checks a recorded set: the same measures and report as a check of a called kernel
/// wherever they apply; non-finite runs and listed points also go to `sink` as they are found. With `--shard I/N` the set is part I of N (as `ulpgauge inputs --shard`
/// writes it), measured whole and labelled for `merge`.
pub fn run_recorded(
    mut set: Recorded,
    config: &CheckConfig,
    sink: &mut dyn FindingSink,
) -> Result<CheckReport, String> {
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
        gather(&mut prober, &setup, config, sink, true)
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
    assemble::report(
        config,
        &setup,
        gathered,
        thresholds,
        hygiene,
        None,
        Vec::new(),
        sink,
    )
}
