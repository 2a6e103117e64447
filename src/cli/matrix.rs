//! `ulpgauge matrix --manifest M --build "CC FLAGS" --build …`: build the manifest's kernels
//! with each compiler and flags, check every build, print kernel × build.
//!
//! Exit status: 0 every build that was attempted built and was checked (findings are in the
//! table, not in the status); 1 a build failed; 2 bad input, or no build could be made.

use super::check::{build_config, combine, KernelTarget};
use super::{check_args, Failure};
use crate::check::{library_info, run_check, RunnerKernel};
use crate::kernel::{load_manifest, Runner};
use crate::matrix::{build, table, BuildResult, BuildStatus, Cell, Matrix, MATRIX_SCHEMA};
use crate::report::{check_writable, write_atomic, Json, ReportFormat};
use std::path::{Path, PathBuf};

/// Arguments of `matrix`.
#[derive(clap::Args, Debug, Clone)]
pub struct Args {
    /// Manifest of the kernels; its library paths are looked up by file name in each build.
    #[arg(long, value_name = "FILE")]
    pub manifest: PathBuf,
    /// A build: compiler then flags, e.g. "gcc -O3 -ffast-math" (repeatable, in column order).
    #[arg(long = "build", value_name = "CC FLAGS", required = true)]
    pub builds: Vec<String>,
    /// Build script, run as `bash SCRIPT OUTDIR` with CC and CFLAGS (default: build.sh beside
    /// the manifest).
    #[arg(long, value_name = "FILE")]
    pub build_script: Option<PathBuf>,
    /// Where the builds go, one folder each (default: a fresh folder under the temp dir).
    #[arg(long, value_name = "DIR")]
    pub work_dir: Option<PathBuf>,
    /// Install a missing compiler with apt-get instead of skipping its builds.
    #[arg(long)]
    pub install_missing: bool,
    #[command(flatten)]
    pub sweep_options: super::check::SweepOptions,
    /// Seconds a batch may take before the kernel counts as hung.
    #[arg(long, value_name = "SECONDS", default_value_t = 10.0)]
    pub timeout: f64,
    /// Address space each worker process may use (4G, 1536M, …), as in `check`.
    #[arg(long, value_name = "SIZE", default_value = "4G")]
    pub kernel_memory: String,
    /// Write one CSV row per kernel and build.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Write the matrix as JSON.
    #[arg(long, value_name = "FILE")]
    pub json: Option<PathBuf>,
    /// Write the matrix as a self-contained HTML page, changes across builds highlighted.
    #[arg(long, value_name = "FILE.html")]
    pub html: Option<PathBuf>,
    /// Write JUnit-style XML (a suite per build, a case per kernel) for CI.
    #[arg(long, value_name = "FILE.xml")]
    pub junit: Option<PathBuf>,
    /// Also write each build's check report (JSON, schema ulpgauge-check/1) into DIR, ready
    /// for `ulpgauge compare`.
    #[arg(long, value_name = "DIR")]
    pub reports: Option<PathBuf>,
    /// Print no table.
    #[arg(long)]
    pub quiet: bool,
}

fn check_options(args: &Args) -> super::check::Args {
    let mut a = check_args::defaults();
    a.sweep_options = args.sweep_options.clone();
    a.timeout = args.timeout;
    a.kernel_memory = args.kernel_memory.clone();
    a
}

fn sweep_words(args: &Args) -> String {
    let kinds = if args.sweep_options.sweep.is_empty() {
        "default sweep".to_string()
    } else {
        args.sweep_options
            .sweep
            .iter()
            .map(|k| format!("{k:?}").to_lowercase())
            .collect::<Vec<_>>()
            .join("+")
            + " sweep"
    };
    format!(
        "{kinds}, {} per binade, range {}, seed {}",
        args.sweep_options
            .points
            .map_or(args.sweep_options.per_binade as u64, |p| p),
        args.sweep_options.range.as_deref().unwrap_or("all"),
        args.sweep_options.seed
    )
}

/// Slug of a build label for file names.
fn slug(label: &str) -> String {
    label
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '-' })
        .collect()
}

/// Runs `matrix`.
pub fn run(args: Args) -> Result<i32, Failure> {
    let specs = load_manifest(&args.manifest).map_err(Failure::bad_input)?;
    let options = check_options(&args);
    // check's own bounds for --timeout and --kernel-memory, before anything is built.
    let runner_options = super::check::runner_options(&options)?;
    // Validate every kernel's configuration before building anything.
    let mut configs = Vec::new();
    for spec in &specs {
        let target = KernelTarget::of_spec(spec);
        configs.push(
            build_config(&target, &options).map_err(|f| {
                Failure::bad_input(format!("kernel {}: {}", spec.symbol, f.message))
            })?,
        );
    }
    let script = match &args.build_script {
        Some(s) => s.clone(),
        None => args
            .manifest
            .parent()
            .unwrap_or(Path::new("."))
            .join("build.sh"),
    };
    if !script.is_file() {
        return Err(Failure::bad_input(format!(
            "build script {} not found (give --build-script)",
            script.display()
        )));
    }
    let work = args.work_dir.clone().unwrap_or_else(|| {
        std::env::temp_dir().join(format!("ulpgauge-matrix-{}", std::process::id()))
    });
    std::fs::create_dir_all(&work)
        .map_err(|e| Failure::bad_input(format!("cannot create {}: {e}", work.display())))?;
    let builds = build::parse(&args.builds, &work).map_err(Failure::bad_input)?;
    for path in [&args.csv, &args.json, &args.html, &args.junit]
        .into_iter()
        .flatten()
    {
        check_writable(path).map_err(Failure::bad_input)?;
    }
    if let Some(dir) = &args.reports {
        std::fs::create_dir_all(dir)
            .map_err(|e| Failure::bad_input(format!("cannot create {}: {e}", dir.display())))?;
    }
    let kernels: Vec<String> = specs.iter().map(|s| s.symbol.clone()).collect();
    let mut results = Vec::new();
    let mut cells = Vec::new();
    let mut codes = Vec::new();
    for b in builds {
        let mut result = BuildResult {
            build: b.clone(),
            status: BuildStatus::Built,
            note: None,
            compiler: None,
        };
        if !build::available(&b.cc) {
            let installed = args.install_missing && build::install(&b.cc).is_ok();
            if !installed {
                let note = format!("{} not found on PATH", b.cc);
                eprintln!("ulpgauge: note: skipping build '{}': {note}", b.label);
                result.status = BuildStatus::Skipped;
                result.note = Some(note);
                results.push(result);
                continue;
            }
        }
        if let Err(e) = build::run_script(&script, &b) {
            eprintln!("ulpgauge: build '{}' failed: {e}", b.label);
            result.status = BuildStatus::Failed;
            result.note = Some(e);
            codes.push(1);
            results.push(result);
            continue;
        }
        let mut reports = Vec::new();
        for (spec, config) in specs.iter().zip(&configs) {
            let file = spec
                .library
                .file_name()
                .map(PathBuf::from)
                .unwrap_or_default();
            let mut spec = spec.clone();
            spec.library = b.dir.join(file);
            let mut config = config.clone();
            config.library = Some(spec.library.clone());
            if result.compiler.is_none() {
                result.compiler = library_info(&spec.library).compiler;
            }
            let outcome = Runner::start(&spec, runner_options.clone())
                .map_err(|e| e.to_string())
                .and_then(|runner| run_check(&mut RunnerKernel(runner), &config));
            match outcome {
                Ok(report) => {
                    cells.push(Cell::of(&report, &spec.symbol, &b.label));
                    reports.push(report);
                }
                Err(e) => cells.push(Cell {
                    kernel: spec.symbol.clone(),
                    function: spec.function.clone(),
                    format: spec.format.name().to_string(),
                    role: spec.role.report_name().to_string(),
                    build: b.label.clone(),
                    max_ulp: None,
                    mean_ulp: None,
                    correctly_rounded: None,
                    faithful: None,
                    failed_checks: None,
                    failed: Vec::new(),
                    crash: None,
                    error: Some(e),
                }),
            }
        }
        if let Some(dir) = &args.reports {
            let text = Json.render(&reports, true).map_err(|e| Failure {
                code: 1,
                message: format!("json report: {e}"),
            })?;
            write_atomic(&dir.join(format!("{}.json", slug(&b.label))), &text)
                .map_err(Failure::bad_input)?;
        }
        results.push(result);
    }
    if results.iter().all(|r| r.status != BuildStatus::Built) {
        return Err(Failure::bad_input(
            "no build could be made (every compiler missing or every build failed)",
        ));
    }
    let matrix = Matrix {
        schema: MATRIX_SCHEMA,
        manifest: args.manifest.display().to_string(),
        sweep: sweep_words(&args),
        builds: results,
        kernels,
        cells,
    };
    if let Some(path) = &args.csv {
        write_atomic(path, &table::csv(&matrix)).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.json {
        let text = table::json(&matrix).map_err(|message| Failure { code: 1, message })?;
        write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.html {
        let text = crate::report::html::matrix_page(&matrix)
            .map_err(|message| Failure { code: 1, message })?;
        write_atomic(path, &text).map_err(Failure::bad_input)?;
    }
    if let Some(path) = &args.junit {
        write_atomic(path, &crate::report::junit::matrix(&matrix)).map_err(Failure::bad_input)?;
    }
    if !args.quiet {
        say!("{}", table::render(&matrix));
    }
    Ok(combine(codes))
}
