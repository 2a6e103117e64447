//! `ulpgauge certify --spec FILE [--json CERTIFICATE]`: judge one kernel against a spec.
//!
//! Exit status: 0 every requirement met, 1 one is not, 2 bad spec (one line naming the key), 3
//! the kernel crashed or hung.

use super::check::{build_config, KernelTarget};
use super::{check_args, Failure};
use crate::certify::{self, Spec};
use crate::check::RunnerKernel;
use crate::kernel::{KernelRole, KernelSpec, Runner, RunnerOptions};
use crate::report::{check_writable, write_atomic};
use std::path::PathBuf;
use std::time::Duration;

/// Arguments of `certify`.
#[derive(clap::Args, Debug, Clone)]
pub struct Args {
    /// The spec (TOML): [kernel], [sweep], [require].
    #[arg(long, value_name = "FILE")]
    pub spec: PathBuf,
    /// Write the certificate (JSON).
    #[arg(long, value_name = "CERTIFICATE")]
    pub json: Option<PathBuf>,
    /// Write the certificate as a self-contained HTML page.
    #[arg(long, value_name = "FILE.html")]
    pub html: Option<PathBuf>,
    /// Write JUnit-style XML (a case per requirement) for CI.
    #[arg(long, value_name = "FILE.xml")]
    pub junit: Option<PathBuf>,
    /// Print no verdict table.
    #[arg(long)]
    pub quiet: bool,
    /// Never show a progress bar.
    #[arg(long)]
    pub no_progress: bool,
}

/// The check options a spec stands for.
fn check_options(spec: &Spec, progress: bool) -> super::check::Args {
    let mut a = check_args::defaults();
    let s = &spec.sweep;
    a.sweep_options.sweep = s.kinds.clone();
    a.sweep_options.range = s.range.clone();
    a.sweep_options.points = s.points;
    if let Some(k) = s.per_binade {
        a.sweep_options.per_binade = k;
    }
    if let Some(n) = s.neighbours {
        a.sweep_options.neighbours = n;
    }
    if let Some(seed) = s.seed {
        a.sweep_options.seed = seed;
    }
    if let Some(m) = s.random_mode {
        a.sweep_options.random_mode = m;
    }
    a.function_args.params = spec
        .params
        .iter()
        .map(|(n, v)| format!("{n}={v}"))
        .collect();
    a.function_args.param_rounding = spec.param_rounding;
    a.role = match spec.role {
        KernelRole::Forward => super::check::RoleArg::Forward,
        KernelRole::Derivative => super::check::RoleArg::Derivative,
        KernelRole::Gradient { .. } => super::check::RoleArg::Gradient,
    };
    a.from_output = spec.role == (KernelRole::Gradient { from_output: true });
    // The rules' tolerance follows max_ulp, as with `check --max-ulp`.
    a.max_ulp = spec.require.max_ulp;
    a.no_progress = !progress;
    a
}

/// The spec key a check option error is about.
fn key_of(message: &str) -> &'static str {
    if message.contains("--points") {
        "sweep.points"
    } else if message.contains("--per-binade") {
        "sweep.per_binade"
    } else if message.contains("exhaustive") || message.contains("--range") {
        "sweep.range"
    } else {
        "kernel"
    }
}

/// Runs `certify`.
pub fn run(args: Args) -> Result<i32, Failure> {
    let shown = args.spec.display().to_string();
    let spec =
        certify::load(&args.spec).map_err(|e| Failure::bad_input(format!("spec {shown}: {e}")))?;
    let options = check_options(&spec, !args.no_progress);
    let target = KernelTarget {
        library: Some(spec.library.clone()),
        symbol: Some(spec.symbol.clone()),
        function: spec.function.name().to_string(),
        format: spec.format.name().to_string(),
        input_format: (spec.input_format.name() != spec.format.name())
            .then(|| spec.input_format.name().to_string()),
        role: spec.role,
        params: options.function_args.params.clone(),
    };
    let config = build_config(&target, &options).map_err(|f| {
        let message = f.message.replace("--range", "range").replace("--", "");
        Failure::bad_input(format!(
            "spec {shown}: key `{}`: {message}",
            key_of(&f.message)
        ))
    })?;
    for path in [&args.json, &args.html, &args.junit].into_iter().flatten() {
        check_writable(path).map_err(Failure::bad_input)?;
    }
    let kernel_spec = KernelSpec {
        library: spec.library.clone(),
        symbol: spec.symbol.clone(),
        function: spec.function.name().to_string(),
        format: spec.format,
        input_format: spec.input_format,
        role: spec.role,
        params: spec.params.clone(),
        param_passing: spec.param_passing,
        in_place: spec.in_place,
        thread_safe: spec.thread_safe,
        signature: spec.signature,
    };
    let runner_options = RunnerOptions {
        batch_timeout: Duration::from_secs_f64(spec.timeout),
        kernel_memory: spec.kernel_memory,
        ..RunnerOptions::default()
    };
    let runner = Runner::start(&kernel_spec, runner_options).map_err(|e| {
        let key = if e.contains("symbol") {
            "kernel.symbol"
        } else {
            "kernel.library"
        };
        Failure::bad_input(format!("spec {shown}: key `{key}`: {e}"))
    })?;
    let mut kernel = RunnerKernel(runner);
    let mut caller = match &spec.require.same_verdict_in {
        Some(list) => {
            let env = super::check_env::CallerEnv::parse(list).map_err(|e| {
                Failure::bad_input(format!("spec {shown}: key `require.same_verdict_in`: {e}"))
            })?;
            let options = RunnerOptions {
                batch_timeout: Duration::from_secs_f64(spec.timeout),
                caller_fpenv: Some(env.word),
                kernel_memory: spec.kernel_memory,
                ..RunnerOptions::default()
            };
            let runner = Runner::start(&kernel_spec, options)
                .map_err(|e| Failure::bad_input(format!("spec {shown}: {e}")))?;
            Some(RunnerKernel(runner))
        }
        None => None,
    };
    let cert = certify::certify_in_env(
        &spec,
        &mut kernel,
        caller
            .as_mut()
            .map(|k| k as &mut dyn crate::check::KernelUnderTest),
        &config,
    )
    .map_err(|message| Failure { code: 1, message })?;
    if let Some(path) = &args.json {
        let mut text = serde_json::to_string_pretty(&cert).map_err(|e| Failure {
            code: 1,
            message: format!("certificate: {e}"),
        })?;
        text.push('\n');
        write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.html {
        let text = crate::report::html::certificate_page(&cert).map_err(|message| Failure {
            code: 1,
            message: format!("html report: {message}"),
        })?;
        write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.junit {
        write_atomic(path, &crate::report::junit::certificate(&cert))
            .map_err(Failure::bad_input)?;
    }
    if !args.quiet {
        say!("{}", certify::table(&cert));
        if let Some(path) = &args.json {
            sayln!("  certificate written to {}", path.display());
        }
    }
    Ok(cert.exit_code)
}
