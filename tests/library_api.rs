//! The in-process library API (`ulpgauge::api`): a closure checked over every binary16 input
//! returns the report `check` writes, with figures that agree with an independent measurement.

use ulpgauge::api::half::{bf16, f16};
use ulpgauge::api::{Check, Format, Sweep};

/// σ in binary32, rounded once to binary16: a typical half-precision kernel.
fn sigmoid_f16(x: f16) -> f16 {
    f16::from_f32(1.0 / (1.0 + (-x.to_f32()).exp()))
}

/// The binary16 ulp of y: 2^(max(⌊log2 |y|⌋, −14) − 10) (IEEE 754-2019 Table 3.5: p = 11,
/// emin = −14; Goldberg's ulp). ⌊log2 |y|⌋ is read from y's binary64 exponent field.
fn ulp16(y: f64) -> f64 {
    let e = if y == 0.0 {
        -14
    } else {
        ((y.abs().to_bits() >> 52) as i32 - 1023).max(-14)
    };
    2f64.powi(e - 10)
}

#[test]
fn a_closure_over_every_f16_input_matches_an_independent_measurement() {
    let report = Check::new("sigmoid", Format::F16)
        .run_f16(sigmoid_f16)
        .unwrap();
    assert_eq!(report.sweep.inputs, 65536);
    assert_eq!(
        report.accuracy.coverage,
        ulpgauge::sweep::Coverage::Exhaustive
    );
    let acc = &report.accuracy.figures;
    // Independent: σ(x) in binary64 from the platform's exp (within an ulp of binary64, i.e.
    // 2^−42 binary16 ulps here), over every finite input (IEEE 754-2019: 2^16 − 2·2^10 + 2
    // non-NaN patterns, less the two infinities); every output is finite and σ > 0 never
    // rounds to a flushed subnormal here.
    let (mut max, mut worst, mut points) = (0.0f64, 0u16, 0u64);
    for bits in 0..=u16::MAX {
        let x = f16::from_bits(bits);
        if !x.is_finite() {
            continue;
        }
        let y = 1.0 / (1.0 + (-x.to_f64()).exp());
        let e = (sigmoid_f16(x).to_f64() - y).abs() / ulp16(y);
        points += 1;
        if e > max {
            (max, worst) = (e, bits);
        }
    }
    assert_eq!(acc.points, points);
    assert!(
        (acc.max_ulp - max).abs() <= 1e-9 * max,
        "{} vs {max}",
        acc.max_ulp
    );
    assert_eq!(
        acc.worst.as_ref().unwrap().input.bits,
        format!("0x{worst:04x}")
    );
    assert!(acc.max_ulp <= 1.0);
    assert_eq!(report.verdict.exit_code, 0);
}

#[test]
fn limits_roles_parameters_and_mistakes() {
    // f(x) = x is no tanh: far beyond a 1-ulp limit on [1, 2) (tanh(1) ≈ 0.76).
    let report = Check::new("tanh", Format::F32)
        .range("1,2")
        .sweep(Sweep::Random(2000))
        .max_ulp(1.0)
        .run_f32(|x| x)
        .unwrap();
    assert_eq!(report.verdict.exit_code, 1);
    assert!(report.accuracy.figures.max_ulp > 1e6);
    // ELU′ with α = 0.5 in bfloat16: α·eˣ for x < 0, 1 for x > 0.
    let report = Check::new("elu", Format::Bf16)
        .derivative()
        .param("alpha", "0.5")
        .run_bf16(|x| {
            let x = x.to_f32();
            bf16::from_f32(if x > 0.0 { 1.0 } else { 0.5 * x.exp() })
        })
        .unwrap();
    assert_eq!(report.role, "derivative");
    assert_eq!(report.params["alpha"], "1/2");
    assert!(report.accuracy.figures.max_ulp <= 1.0);
    // Mistakes are errors, not panics.
    assert!(Check::new("sigmoid", Format::F32)
        .run_f16(sigmoid_f16)
        .is_err());
    assert!(Check::new("sigmoidal", Format::F16)
        .run_f16(sigmoid_f16)
        .is_err());
    assert!(Check::new("elu", Format::F16)
        .param("beta", "1")
        .run_f16(sigmoid_f16)
        .is_err());
}
