//! `check` options built in code, for commands that run checks in-process (certify, matrix).

use super::check::{Args, PassingArg, RoleArg};
use super::FunctionArgs;
use crate::reference::ParamRounding;
use crate::sweep::SampleMode;

/// `check`'s options with every default, no kernel named and no output.
pub fn defaults() -> Args {
    Args {
        lib: None,
        symbol: None,
        function: None,
        format: None,
        input_format: None,
        output_format: None,
        function_args: FunctionArgs {
            params: Vec::new(),
            param_rounding: ParamRounding::Exact,
            fp8_overflow: None,
        },
        role: RoleArg::Forward,
        from_output: false,
        sweep_options: super::check::SweepOptions {
            sweep: Vec::new(),
            range: None,
            points: None,
            per_binade: 256,
            neighbours: 16,
            seed: 1,
            random_mode: SampleMode::Bits,
        },
        json: None,
        csv: None,
        csv_points_over: None,
        findings: None,
        list_runs: crate::measure::LISTED_RUNS,
        plot: None,
        html: None,
        junit: None,
        max_ulp: None,
        allow_non_finite: false,
        abs_floor: None,
        manifest: None,
        param_passing: PassingArg::Baked,
        in_place: false,
        not_thread_safe: false,
        signature: super::check::SignatureArg::Contiguous,
        strides: None,
        timeout: 10.0,
        stop_on_crash: false,
        max_restarts: crate::kernel::DEFAULT_MAX_RESTARTS,
        max_fault_time: crate::kernel::DEFAULT_MAX_FAULT_TIME.as_secs_f64(),
        kernel_memory: "4G".to_string(),
        kernel_workers: None,
        reference: crate::check::ReferencePath::Auto,
        shard: None,
        quiet: true,
        no_progress: true,
        builtin_kernel: None,
        inputs: None,
        outputs: None,
        grads: None,
        caller_fpenv: None,
        cpu_mask: Vec::new(),
        quant: Default::default(),
    }
}
