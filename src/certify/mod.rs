//! `certify`: check one kernel against a spec's requirements and issue a certificate.
//!
//! [`spec::load`] validates the spec, the CLI turns it into a [`CheckConfig`] and starts the
//! kernel runner, [`certify`] runs the check (plus one check per `require.range`), judges every
//! listed requirement and assembles the [`Certificate`].

pub mod certificate;
pub mod judge;
pub mod spec;

pub use certificate::{table, Certificate, CERTIFICATE_SCHEMA};
pub use judge::{judge, Judged};
pub use spec::{load, Spec};

use crate::check::{run_check, CheckConfig, KernelUnderTest};

/// Runs the checks a spec needs on a started kernel and judges them.
pub fn certify(
    spec: &Spec,
    kernel: &mut dyn KernelUnderTest,
    config: &CheckConfig,
) -> Result<Certificate, String> {
    certify_in_env(spec, kernel, None, config)
}

/// The main check and one check per `require.range`, on one kernel.
fn checks(
    spec: &Spec,
    kernel: &mut dyn KernelUnderTest,
    config: &CheckConfig,
) -> Result<(crate::report::CheckReport, Vec<crate::report::CheckReport>), String> {
    let report = run_check(kernel, config)?;
    let mut range_reports = Vec::new();
    for limit in &spec.require.ranges {
        // Each range gets the same sweep restricted to it, so its figures are its own.
        let mut sub = config.clone();
        sub.sweep.range = limit.range.clone();
        sub.progress = false;
        range_reports.push(run_check(kernel, &sub)?);
    }
    Ok((report, range_reports))
}

/// [`certify`], with `caller` the same kernel started in the caller's FP environment of
/// `require.same_verdict_in`: every requirement is judged in both, and the requirement
/// `same_verdict_in` passes when each is judged alike.
pub fn certify_in_env(
    spec: &Spec,
    kernel: &mut dyn KernelUnderTest,
    caller: Option<&mut dyn KernelUnderTest>,
    config: &CheckConfig,
) -> Result<Certificate, String> {
    let (report, range_reports) = checks(spec, kernel, config)?;
    let mut judged = judge(&spec.require, &report, &range_reports);
    if let (Some(caller), Some(env)) = (caller, &spec.require.same_verdict_in) {
        let (c_report, c_ranges) = checks(spec, caller, config)?;
        let in_env = judge(&spec.require, &c_report, &c_ranges);
        judged.push(judge::same_verdict(env, &judged, &in_env));
    }
    Ok(certificate::certificate(
        spec,
        report,
        &range_reports,
        judged,
    ))
}
