//! Derivative and gradient roles, kinks, and manifest reports.

mod check_support;

use check_support::{config, temp_dir};
use ulpgauge::check::{run_check, CheckRole, InProcessKernel, KernelUnderTest};
use ulpgauge::cli::check::{run_many, Outputs};
use ulpgauge::format::{Bfloat16, Binary16, Format};
use ulpgauge::sweep::SweepKind;

/// bfloat16 1.0 is 0x3f80 (binary32's top 16 bits, 0x3f800000).
const ONE_BF16: u32 = 0x3f80;

#[test]
fn relu_derivative_with_the_left_value_at_zero() {
    // relu'(x) = 1 for x > 0 and 0 for x < 0; many frameworks return 0 at x = 0 (common
    // practice), the left-hand value.
    let f = &Bfloat16;
    let mut kernel = InProcessKernel::new(|x, _| {
        let v = f.to_f64(x);
        Some(if v.is_nan() {
            x
        } else if v > 0.0 {
            ONE_BF16
        } else {
            0
        })
    });
    let cfg = config(
        "relu",
        &Bfloat16,
        CheckRole::Derivative,
        &[SweepKind::Exhaustive],
        None,
    );
    let report = run_check(&mut kernel, &cfg).unwrap();
    assert_eq!(report.kinks.len(), 2, "+0 and -0");
    assert!(report.kinks.iter().all(|k| k.uses == "left"));
    // Either one-sided value is accepted at the kink, so every point is correctly rounded.
    assert_eq!(report.accuracy.figures.correctly_rounded, 1.0);
    assert_eq!(report.verdict.exit_code, 0, "{:?}", report.verdict.failed);
}

#[test]
fn gradient_kernel_gets_seeded_representable_g() {
    let f: &'static dyn Format = &Binary16;
    let mut seen = Vec::new();
    let mut kernel = ulpgauge::check::builtin(
        "reference",
        ulpgauge::activation::lookup("swish").unwrap(),
        f,
        CheckRole::Gradient { from_output: false },
        &[],
        ulpgauge::reference::ParamRounding::Exact,
    )
    .unwrap();
    let mut spy = InProcessKernel::new(|x, g: Option<u32>| {
        let g = g.expect("gradient kernels get g");
        seen.push(g);
        kernel.run(&[x], Some(&[g])).outputs[0]
    });
    let mut cfg = config(
        "swish",
        f,
        CheckRole::Gradient { from_output: false },
        &[SweepKind::Random],
        Some("-8,8"),
    );
    cfg.sweep.random_points = 3000;
    let report = run_check(&mut spy, &cfg).unwrap();
    let acc = &report.accuracy.figures;
    assert!(acc.points > 2000);
    assert_eq!(acc.correctly_rounded, 1.0);
    assert!(acc.max_ulp <= 0.5);
    assert!(seen
        .iter()
        .all(|&g| (0.5..2.0).contains(&f.to_f64(g).abs())));
    assert!(seen.iter().any(|&g| f.to_f64(g) < 0.0) && seen.iter().any(|&g| f.to_f64(g) > 0.0));
}

#[test]
fn manifest_report_lists_every_kernel() {
    let f: &'static dyn Format = &Binary16;
    let make = |name: &str| -> Box<dyn KernelUnderTest> {
        ulpgauge::check::builtin(
            name,
            ulpgauge::activation::lookup("tanh").unwrap(),
            f,
            CheckRole::Forward,
            &[],
            ulpgauge::reference::ParamRounding::Exact,
        )
        .unwrap()
    };
    let cfg = config("tanh", f, CheckRole::Forward, &[SweepKind::Edge], None);
    let mut kernels = vec![
        (make("reference"), cfg.clone()),
        (make("crash-on-nan"), cfg),
    ];
    let dir = temp_dir("manifest");
    let json = dir.join("all.json");
    let outputs = Outputs {
        json: Some(json.clone()),
        csv: None,
        plot: None,
        terminal: false,
        ..Default::default()
    };
    let code = run_many(&mut kernels, &outputs).unwrap();
    // One kernel crashed: 3 beats 0.
    assert_eq!(code, 3);
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let list = v["kernels"].as_array().unwrap();
    assert_eq!(list.len(), 2);
    assert!(list[0]["crash"].is_null() && list[1]["crash"]["signal"] == "SIGSEGV");
}

#[test]
fn gradient_from_output_kernel_gets_f_of_x() {
    // σ′ = σ(1 − σ) (common practice: backward passes reuse the forward output y = σ(x)).
    let f: &'static dyn Format = &Binary16;
    let mut firsts = Vec::new();
    let mut kernel = InProcessKernel::new(|y: u32, g: Option<u32>| {
        firsts.push(y);
        let (yv, gv) = (f.to_f64(y), f.to_f64(g.unwrap()));
        Some(half::f16::from_f64(gv * yv * (1.0 - yv)).to_bits() as u32)
    });
    let mut cfg = config(
        "sigmoid",
        f,
        CheckRole::Gradient { from_output: true },
        &[SweepKind::Random],
        Some("-8,8"),
    );
    cfg.sweep.random_points = 2000;
    let report = run_check(&mut kernel, &cfg).unwrap();
    assert_eq!(report.role, "gradient");
    assert!(report.from_output);
    // Every first argument is a sigmoid output: in [0, 1], or NaN for the NaN probes.
    assert!(firsts
        .iter()
        .all(|&y| f.to_f64(y).is_nan() || (0.0..=1.0).contains(&f.to_f64(y))));
    assert!(firsts.iter().any(|&y| f.to_f64(y) < 0.5));
    // y is already rounded, so the result is not correctly rounded everywhere, but stays close:
    // the relative error of y(1 − y) from RN(y) is at most a few ulps away from x = 0's tails.
    assert!(report.accuracy.figures.points > 1500);
    assert!(report.accuracy.figures.max_ulp > 0.5);
}

#[test]
fn a_non_finite_run_may_end_on_the_last_bit_pattern() {
    // A -ffast-math kernel answers NaN inputs with a finite value; on binary16 the negative
    // NaNs run up to 0xffff, the very last pattern, where the gap scan must stop (this used to
    // overflow).
    use ulpgauge::format::Class;
    let reference =
        check_support::evaluator("relu", &Binary16, ulpgauge::activation::Role::Forward);
    let mut kernel = InProcessKernel::new(move |x, _| {
        Some(if Binary16.classify(x) == Class::Nan {
            0
        } else {
            reference.reference(x).unwrap().bits
        })
    });
    let config = config(
        "relu",
        &Binary16,
        CheckRole::Forward,
        &[SweepKind::Dense, SweepKind::Edge],
        None,
    );
    let report = run_check(&mut kernel, &config).unwrap();
    let runs = serde_json::to_value(&report.non_finite).unwrap();
    let last = runs
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["last"]["bits"] == "0xffff")
        .expect("run up to 0xffff");
    assert_eq!(last["first"]["bits"], "0xfc01");
    assert_eq!(last["kernel"], "finite");
    assert_eq!(last["reference"], "nan");
}
