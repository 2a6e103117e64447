//! Two kernels (the same kernel in two FP environments, or two dispatch variants) called on
//! the same inputs and compared output by output, in bounded memory: counts are exact, only
//! the first few differences are kept.

use super::{CheckConfig, CheckRole, KernelUnderTest, Setup};
use crate::format::{Class, Format};
use crate::report::environment::{Difference, OutputComparison, LISTED_DIFFERENCES};
use crate::report::BitsValue;
use crate::sweep::Inputs;

/// Inputs per call of the comparison pass.
const CHUNK: u64 = 1 << 16;

/// Whether two outputs count as the same: equal bits, both NaN, or both missing.
fn same(format: &dyn Format, a: Option<u32>, b: Option<u32>) -> bool {
    match (a, b) {
        (Some(a), Some(b)) => {
            a == b || (format.classify(a) == Class::Nan && format.classify(b) == Class::Nan)
        }
        (None, None) => true,
        _ => false,
    }
}

/// Calls `first` and `second` on the check's measured inputs and edge probes (the inputs the
/// report's figures come from; a shard's part only) and compares their outputs.  No reference
/// is computed except a from-output gradient's forward values.
pub fn compare_runs(
    first: &mut dyn KernelUnderTest,
    second: &mut dyn KernelUnderTest,
    config: &CheckConfig,
) -> Result<OutputComparison, String> {
    let setup = Setup::new(config)?;
    let format = config.format;
    let input = config.input_format;
    let mut measured = setup.plan.measured.clone();
    if let Some(shard) = &config.shard {
        let (from, to) = shard.bounds(measured.len());
        measured = measured.slice(from, to);
    }
    let inputs = measured.union(&Inputs::from_list(setup.probes.clone()));
    let arguments = |xs: &[u32]| -> (Vec<u32>, Vec<u32>, Option<Vec<u32>>) {
        let mut kept = Vec::with_capacity(xs.len());
        let mut firsts = Vec::with_capacity(xs.len());
        let mut seconds = Vec::new();
        for &x in xs {
            // An input whose from-output argument has no reference is left out, as in the check.
            if let Ok((a, g)) = setup.refs.arguments(x) {
                kept.push(x);
                firsts.push(a);
                seconds.extend(g);
            }
        }
        let seconds = (!seconds.is_empty()).then_some(seconds);
        (kept, firsts, seconds)
    };
    // The outputs at +0 and −0, to tell an input read as zero.
    let gradient = config.role != CheckRole::Forward && config.role != CheckRole::Derivative;
    let zeros = [0u32, input.infinity(true) & !input.infinity(false)];
    let zero_out = |k: &mut dyn KernelUnderTest| k.run(&zeros, None).outputs;
    let (zero_a, zero_b) = if gradient {
        (Vec::new(), Vec::new())
    } else {
        (zero_out(first), zero_out(second))
    };
    let mut result = OutputComparison::default();
    // One pass over the inputs, CHUNK at a time (a lazy sweep is generated as it goes).
    let mut all = inputs.iter();
    loop {
        let chunk: Vec<u32> = all.by_ref().take(CHUNK as usize).collect();
        if chunk.is_empty() {
            break;
        }
        let (xs, args, g) = arguments(&chunk);
        let a = first.run(&args, g.as_deref()).outputs;
        let b = second.run(&args, g.as_deref()).outputs;
        for (i, &x) in xs.iter().enumerate() {
            let (ya, yb) = (a.get(i).copied().flatten(), b.get(i).copied().flatten());
            result.compared += 1;
            if same(format, ya, yb) {
                continue;
            }
            result.differing += 1;
            if input.classify(x) == Class::Subnormal {
                result.at_subnormal_inputs += 1;
            }
            if result.first_differences.len() < LISTED_DIFFERENCES {
                result.first_differences.push(Difference {
                    input: BitsValue::new(input, x),
                    first: ya.map(|y| BitsValue::new(format, y)),
                    second: yb.map(|y| BitsValue::new(format, y)),
                });
            }
            if let (Some(ya), Some(yb)) = (ya, yb) {
                if format.classify(ya) == Class::Subnormal && format.classify(yb) == Class::Zero {
                    result.outputs_flushed += 1;
                }
            }
            if !gradient && input.classify(x) == Class::Subnormal {
                let sign = input.is_sign_negative(x) as usize;
                let (za, zb) = (
                    zero_a.get(sign).copied().flatten(),
                    zero_b.get(sign).copied().flatten(),
                );
                if zb.is_some() && same(format, yb, zb) && !same(format, ya, za) {
                    result.inputs_read_as_zero += 1;
                }
            }
        }
    }
    Ok(result)
}
