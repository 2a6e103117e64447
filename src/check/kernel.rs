//! What `check` needs of a kernel, and an in-process implementation for tests.

pub use crate::report::model::HygieneEntry;
use std::time::Instant;

/// One input on which the kernel crashed or hung.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct KernelCrash {
    /// The first argument at which it happened.
    pub input: u32,
    /// Its index in the batch.
    pub index: usize,
    /// The signal's name ("SIGSEGV", or "hang" for a timeout).
    pub signal: String,
}

/// Outputs of one batch.
#[derive(Clone, Debug, Default)]
pub struct KernelOutput {
    /// One per input; `None` where the kernel crashed (and was restarted past it).
    pub outputs: Vec<Option<u32>>,
    /// Every crash of the batch.
    pub crashes: Vec<KernelCrash>,
    /// The second arguments the kernel actually used, when it brings its own (a recorded
    /// set's g); `None`: the ones it was given.
    pub seconds: Option<Vec<Option<u32>>>,
}

/// A kernel under test: calls on batches of bit patterns, hygiene, throughput.
///
/// The argument convention follows the role: forward and derivative kernels take x; gradient
/// kernels take x (or y = f(x) for kernels that work from the forward output) and the upstream
/// gradient g as `second`.
pub trait KernelUnderTest: Send {
    /// Calls the kernel on every element.
    fn run(&mut self, first: &[u32], second: Option<&[u32]>) -> KernelOutput;
    /// The runner's hygiene checks on a sample.
    fn hygiene(&mut self, sample: &[u32], second: Option<&[u32]>) -> Vec<HygieneEntry>;
    /// Throughput on a sample, in nanoseconds per element.
    fn ns_per_element(&mut self, sample: &[u32], second: Option<&[u32]>) -> Option<f64>;
    /// The element strides `(sx, sy)` a strided kernel is called with; `None` for contiguous
    /// arrays.
    fn strides(&self) -> Option<(i32, i32)> {
        None
    }
}

/// A kernel that is a Rust closure of (first, second) → output, where `None` stands for a
/// crash on that element; for tests and demonstrations.
pub struct InProcessKernel<F> {
    kernel: F,
}

impl<F: FnMut(u32, Option<u32>) -> Option<u32>> InProcessKernel<F> {
    /// Wraps a closure.
    pub fn new(kernel: F) -> Self {
        InProcessKernel { kernel }
    }
}

impl<F: FnMut(u32, Option<u32>) -> Option<u32> + Send> KernelUnderTest for InProcessKernel<F> {
    fn run(&mut self, first: &[u32], second: Option<&[u32]>) -> KernelOutput {
        let mut out = KernelOutput::default();
        for (index, &x) in first.iter().enumerate() {
            let y = (self.kernel)(x, second.map(|s| s[index]));
            if y.is_none() {
                out.crashes.push(KernelCrash {
                    input: x,
                    index,
                    signal: "SIGSEGV".into(),
                });
            }
            out.outputs.push(y);
        }
        out
    }

    /// Checks what an in-process closure can show: same outputs on a second call, and in a
    /// batch as one by one.
    fn hygiene(&mut self, sample: &[u32], second: Option<&[u32]>) -> Vec<HygieneEntry> {
        let a = self.run(sample, second).outputs;
        let b = self.run(sample, second).outputs;
        let single: Vec<Option<u32>> = sample
            .iter()
            .enumerate()
            .map(|(i, &x)| (self.kernel)(x, second.map(|s| s[i])))
            .collect();
        let differing =
            |u: &[Option<u32>], v: &[Option<u32>]| u.iter().zip(v).filter(|(p, q)| p != q).count();
        let (d_repeat, d_single) = (differing(&a, &b), differing(&a, &single));
        vec![
            HygieneEntry {
                check: "deterministic".into(),
                passed: d_repeat == 0,
                detail: format!(
                    "{d_repeat} of {} outputs changed on a second call",
                    sample.len()
                ),
                message: String::new(),
            },
            HygieneEntry {
                check: "batch-independent".into(),
                passed: d_single == 0,
                detail: format!(
                    "{d_single} of {} outputs differ between batch and single calls",
                    sample.len()
                ),
                message: String::new(),
            },
        ]
    }

    fn ns_per_element(&mut self, sample: &[u32], second: Option<&[u32]>) -> Option<f64> {
        if sample.is_empty() {
            return None;
        }
        let start = Instant::now();
        let out = self.run(sample, second);
        std::hint::black_box(&out);
        Some(start.elapsed().as_nanos() as f64 / sample.len() as f64)
    }
}
