//! The kernel runner (an isolated worker process) seen as a [`KernelUnderTest`].

use super::kernel::{HygieneEntry, KernelCrash, KernelOutput, KernelUnderTest};
use crate::kernel::Runner;

/// A shared-library kernel behind [`Runner`].
pub struct RunnerKernel(pub Runner);

impl KernelUnderTest for RunnerKernel {
    fn run(&mut self, first: &[u32], second: Option<&[u32]>) -> KernelOutput {
        let outcome = self.0.run(first, second);
        KernelOutput {
            outputs: outcome.outputs,
            seconds: None,
            crashes: outcome
                .crashes
                .into_iter()
                .map(|c| KernelCrash {
                    input: c.input,
                    index: c.index,
                    signal: c.signal,
                })
                .collect(),
        }
    }
    fn hygiene(&mut self, sample: &[u32], second: Option<&[u32]>) -> Vec<HygieneEntry> {
        crate::kernel::hygiene::run_checks(&mut self.0, sample, second)
            .into_iter()
            .map(|h| HygieneEntry {
                check: h.check.to_string(),
                passed: h.passed,
                detail: h.detail,
                message: String::new(),
            })
            .collect()
    }
    fn ns_per_element(&mut self, sample: &[u32], second: Option<&[u32]>) -> Option<f64> {
        self.0.ns_per_element(sample, second)
    }
    fn strides(&self) -> Option<(i32, i32)> {
        match self.0.spec().signature {
            crate::kernel::Signature::Contiguous => None,
            crate::kernel::Signature::Strided { sx, sy } => Some((sx, sy)),
        }
    }
}
