//! The blended ELU of the fictional Lumen Edge runtime in binary16: its NaN run must start at
//! the first binary16 x whose e^x rounds to +∞.

mod check_support;

use check_support::config;
use half::f16;
use ulpgauge::check::{run_check, CheckRole, InProcessKernel};
use ulpgauge::format::Binary16;
use ulpgauge::sweep::SweepKind;

/// ELU (alpha = 1) written branch-free, each operation in binary16:
/// y = m·x + (1 − m)·(e^x − 1), m = (x > 0). Once e^x is +∞, (1 − m)·∞ = 0·∞ = NaN.
fn blended_elu(bits: u32) -> Option<u32> {
    let x = f16::from_bits(bits as u16);
    let m = if x > f16::ZERO { f16::ONE } else { f16::ZERO };
    let e = f16::from_f64(x.to_f64().exp());
    let y = m * x + (f16::ONE - m) * (e - f16::ONE);
    Some(y.to_bits() as u32)
}

/// First binary16 x with e^x ≥ the overflow threshold. IEEE 754 binary16: largest finite
/// 65504 = (2 − 2^−10)·2^15, so ulp there is 2^5 = 32 and values from 65504 + 16 = 65520 on
/// round to +∞ under round-to-nearest-even (65520 is a tie whose even neighbour is 2^16, i.e.
/// +∞; IEEE 754-2019 §4.3.1 and §7.4).
fn first_overflowing_input() -> u16 {
    let limit = 65504.0f64 + 32.0 / 2.0;
    // e^x is increasing, so scan x upward from 1.0 (0x3c00); binary64 exp is far more accurate
    // than the 2^−7 spacing of binary16 values near ln 65520 ≈ 11.09.
    (0x3c00u16..0x7c00)
        .find(|&b| f16::from_bits(b).to_f64().exp() >= limit)
        .unwrap()
}

fn nan_run_first(kinds: &[SweepKind]) -> (String, String, String) {
    let mut kernel = InProcessKernel::new(|x, _| blended_elu(x));
    let mut cfg = config("elu", &Binary16, CheckRole::Forward, kinds, None);
    cfg.sweep.per_binade = 5;
    let report = run_check(&mut kernel, &cfg).expect("check");
    let run = report
        .non_finite
        .iter()
        .find(|r| r.kernel == "nan" && r.reference == "finite" && !r.first.bits.starts_with("0x8"))
        .expect("a NaN run on the positive side");
    (
        run.first.bits.clone(),
        run.last.bits.clone(),
        run.interior.to_string(),
    )
}

#[test]
fn exhaustive_nan_run_starts_where_exp_overflows() {
    let first = first_overflowing_input();
    // ln 65520 ≈ 11.0902 (from memory), between the binary16 neighbours 11.0859375 and 11.09375.
    assert_eq!(f16::from_bits(first).to_f64(), 11.09375);
    let (run_first, run_last, interior) = nan_run_first(&[SweepKind::Exhaustive]);
    assert_eq!(run_first, format!("0x{first:04x}"));
    // Up to the largest finite binary16 (0x7bff); +∞ itself is a different run (reference +∞).
    assert_eq!(run_last, "0x7bff");
    assert_eq!(interior, "exhaustive");
}

#[test]
fn sampled_sweep_finds_the_same_exact_first_input() {
    let first = first_overflowing_input();
    let (run_first, run_last, interior) = nan_run_first(&[SweepKind::Dense, SweepKind::Edge]);
    assert_eq!(run_first, format!("0x{first:04x}"));
    assert_eq!(run_last, "0x7bff");
    assert_eq!(interior, "sampled");
}
