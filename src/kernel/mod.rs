//! Running the user's kernels: the C ABI, the manifest, the isolated worker process and the
//! hygiene checks.
//!
//! The kernel never runs in the calling process.  [`Runner`] starts the same executable as a
//! hidden `worker` subcommand, which loads the library and calls the kernel on batches sent over
//! pipes; a crash or hang kills only the worker, and the runner bisects the batch down to the
//! input that triggers it.  Loading a library runs its code, so the worker isolates crashes but
//! is not a sandbox: what it guarantees is that the main process trusts nothing the worker
//! sends (`protocol.rs`), bounds the workers it starts (`bisect.rs`) and their address space
//! (`spawn.rs`), and leaves no process behind (each worker leads its own process group, killed
//! with it; see `crate::guard`).

pub mod abi;
pub mod bisect;
pub mod fpenv;
pub mod hygiene;
pub mod loader;
pub mod manifest;
mod partner;
pub mod protocol;
mod runner;
mod spawn;
pub mod stride;
pub mod worker;

pub use bisect::{batch_timeout, fault_limits};
pub use hygiene::HygieneCheck;
pub use manifest::{
    load_check_manifest, load_manifest, load_manifest_entries, EntryExtras, PairEntry,
};
pub use runner::{
    default_workers, CallError, CrashRecord, RunOutcome, Runner, RunnerOptions,
    DEFAULT_MAX_FAULT_TIME, DEFAULT_MAX_RESTARTS, MAX_WORKERS, PACE_FACTOR, PACE_FLOOR,
};
pub use spawn::{kernel_memory, show_size, DEFAULT_KERNEL_MEMORY};
pub use stride::Signature;

use crate::format::Format;
use std::path::PathBuf;

/// What the kernel computes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum KernelRole {
    /// y = f(x).
    Forward,
    /// y = f′(x).
    Derivative,
    /// dx = g·f′(x); with `from_output` the kernel takes the forward output y = f(x) instead of x.
    Gradient {
        /// The first argument is y = f(x), not x.
        from_output: bool,
    },
}

impl KernelRole {
    /// Whether the kernel takes a second input array (g).
    pub fn takes_gradient(self) -> bool {
        matches!(self, KernelRole::Gradient { .. })
    }
    /// The name reports use for the role ("gradient" with or without `from_output`).
    pub fn report_name(self) -> &'static str {
        match self {
            KernelRole::Gradient { .. } => "gradient",
            other => other.name(),
        }
    }
    /// The manifest spelling.
    pub fn name(self) -> &'static str {
        match self {
            KernelRole::Forward => "forward",
            KernelRole::Derivative => "derivative",
            KernelRole::Gradient { from_output: false } => "gradient",
            KernelRole::Gradient { from_output: true } => "gradient-from-output",
        }
    }
}

/// How the function's parameters reach the kernel.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ParamPassing {
    /// Compiled into the kernel; ulpgauge only uses them for the reference.
    Baked,
    /// Passed as trailing `float` arguments, in the catalog's parameter order.
    Trailing,
}

/// One kernel to test: where it is, what it computes and how to call it.
#[derive(Clone, Debug)]
pub struct KernelSpec {
    /// The shared library.
    pub library: PathBuf,
    /// The exported symbol.
    pub symbol: String,
    /// Catalog name of the function it computes.
    pub function: String,
    /// Number format of y (and of x unless `input_format` differs).
    pub format: &'static dyn Format,
    /// Number format of x (and of a gradient's g): `format` unless the kernel mixes formats.
    pub input_format: &'static dyn Format,
    /// Forward, derivative or gradient.
    pub role: KernelRole,
    /// Parameter values as (NAME, exact decimal text); unset parameters take catalog defaults.
    pub params: Vec<(String, String)>,
    /// Baked in or trailing arguments.
    pub param_passing: ParamPassing,
    /// Whether y == x is allowed.
    pub in_place: bool,
    /// Whether concurrent calls are allowed.
    pub thread_safe: bool,
    /// Contiguous `(x, y, n)` or strided `(x, sx, y, sy, n)`, with the sweep's strides.
    pub signature: Signature,
}

impl KernelSpec {
    /// The values of the trailing `float` arguments: every catalog parameter of the function in
    /// catalog order, the spec's value or the default, rounded to nearest f32.  Empty when
    /// parameters are baked in.
    pub fn trailing_args(&self) -> Result<Vec<f32>, String> {
        if self.param_passing == ParamPassing::Baked {
            return Ok(Vec::new());
        }
        let f = crate::activation::lookup(&self.function)
            .ok_or_else(|| format!("unknown function '{}'", self.function))?;
        f.params()
            .iter()
            .map(|p| {
                let text = self
                    .params
                    .iter()
                    .rev()
                    .find(|(n, _)| n == p.name)
                    .map(|(_, v)| v.as_str())
                    .unwrap_or(p.default);
                // Rust's float parsing rounds the decimal correctly (to nearest, ties to even).
                text.trim()
                    .parse::<f32>()
                    .map_err(|_| format!("parameter {} = '{text}' is not a number", p.name))
            })
            .collect()
    }
}
