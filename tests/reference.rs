//! Correctly rounded references against published constants, definitions and facts of the
//! trade, and against the committed golden tables.

use rug::Rational;
use ulpgauge::activation::{catalog, lookup, Constants, Role};
use ulpgauge::format::{Bfloat16, Binary16, Binary32, Format};
use ulpgauge::reference::{Evaluator, ParamRounding, Reference};

fn evaluator(
    name: &str,
    role: Role,
    format: &'static dyn Format,
    params: &[&str],
    rounding: ParamRounding,
) -> Evaluator<'static> {
    let f = lookup(name).unwrap();
    let assignments: Vec<String> = params.iter().map(|s| s.to_string()).collect();
    let user = Constants::parse_params(f, &assignments).unwrap();
    Evaluator::new(
        f,
        role,
        Constants::resolve(f, &user, rounding, format),
        format,
    )
}

fn at(name: &str, role: Role, format: &'static dyn Format, x: f64) -> Reference {
    let bits = format.from_f64_exact(x).expect("representable input");
    evaluator(name, role, format, &[], ParamRounding::Exact)
        .reference(bits)
        .unwrap()
}

fn value(name: &str, role: Role, format: &'static dyn Format, x: f64) -> f64 {
    format.to_f64(at(name, role, format, x).bits)
}

#[test]
fn facts_of_the_trade() {
    // Common practice: σ(0) = 1/2, σ′ peaks at 1/4 at 0, tanh′ peaks at 1 at 0, relu′ is 0 on
    // the left and 1 on the right, softplus(0) = ln 2.
    for format in [&Binary32 as &'static dyn Format, &Binary16, &Bfloat16] {
        assert_eq!(value("sigmoid", Role::Forward, format, 0.0), 0.5);
        assert_eq!(value("sigmoid", Role::Derivative, format, 0.0), 0.25);
        assert_eq!(value("tanh", Role::Derivative, format, 0.0), 1.0);
        assert_eq!(value("relu", Role::Derivative, format, -1.0), 0.0);
        assert_eq!(value("relu", Role::Derivative, format, 1.0), 1.0);
        assert_eq!(value("gelu", Role::Forward, format, 0.0), 0.0);
        assert_eq!(value("gelu", Role::Derivative, format, 0.0), 0.5);
        assert_eq!(value("swish", Role::Derivative, format, 0.0), 0.5);
    }
    assert_eq!(
        value("softplus", Role::Forward, &Binary32, 0.0),
        std::f64::consts::LN_2 as f32 as f64
    );
    assert_eq!(value("step", Role::Forward, &Binary16, -0.0), 1.0);
    assert_eq!(value("step", Role::Forward, &Binary16, -0.5), 0.0);
}

#[test]
fn selu_constants_are_the_published_ones() {
    // Klambauer et al. (2017), "Self-Normalizing Neural Networks": λ ≈ 1.0507009873554804934193349852946,
    // α ≈ 1.6732632423543772848170429916717. Rust's decimal parser rounds correctly to f32, an
    // independent conversion of the same decimals.
    let lambda: f32 = "1.0507009873554804934193349852946".parse().unwrap();
    let alpha: f32 = "1.6732632423543772848170429916717".parse().unwrap();
    assert_eq!(value("selu", Role::Forward, &Binary32, 1.0), lambda as f64);
    assert_eq!(
        value("selu", Role::Derivative, &Binary32, 1.0),
        lambda as f64
    );
    // f(−∞) = −λα.
    let e = evaluator("selu", Role::Forward, &Binary32, &[], ParamRounding::Exact);
    let limit = Binary32.to_f64(e.reference(0xff80_0000).unwrap().bits);
    // λα in binary64 is within 2^-52 relative of the exact product, far inside this f32 rounding
    // interval (checked: the f64 product is not within 2^-40 of an f32 midpoint).
    let product: f64 = "1.0507009873554804934193349852946".parse::<f64>().unwrap()
        * "1.6732632423543772848170429916717".parse::<f64>().unwrap();
    let _ = alpha;
    assert_eq!(limit, -(product as f32) as f64);
    // With constants rounded to f32 the kernel's own product λ_f32·x is exact in f64 for x = 3.
    let rounded = evaluator("selu", Role::Forward, &Binary32, &[], ParamRounding::F32);
    let bits = rounded
        .reference(Binary32.from_f64_exact(3.0).unwrap())
        .unwrap()
        .bits;
    assert_eq!(Binary32.to_f64(bits), (lambda as f64 * 3.0) as f32 as f64);
}

#[test]
fn gelu_definitions_match_hendrycks_and_gimpel() {
    // Hendrycks & Gimpel (2016): GELU(x) = x·Φ(x); the tanh form uses √(2/π) and 0.044715.
    // Φ(1) = 0.8413447460685429 (standard normal table value, from memory); x·Φ(x) at 1 in f32:
    assert_eq!(
        value("gelu", Role::Forward, &Binary32, 1.0),
        0.8413447460685429_f64 as f32 as f64
    );
    // tanh form at 1: 0.5·(1 + tanh(√(2/π)·1.044715)) = 0.8411919906082768 (f64 libm evaluation).
    let t = 0.5 * (1.0 + ((2.0 / std::f64::consts::PI).sqrt() * 1.044715f64).tanh());
    assert_eq!(
        value("gelu-tanh", Role::Forward, &Binary32, 1.0),
        t as f32 as f64
    );
    // √(2/π) rounded to f32 is what --param-rounding f32 uses (0.7978845608028654 from memory).
    let c = evaluator(
        "gelu-tanh",
        Role::Forward,
        &Binary32,
        &[],
        ParamRounding::F32,
    );
    let stored = c.constants().get("c").exact().unwrap().to_f64();
    assert_eq!(stored, 0.7978845608028654_f64 as f32 as f64);
}

#[test]
fn swish_matches_ramachandran_definition() {
    // Ramachandran et al. (2017): swish(x) = x·σ(βx); silu is β = 1.
    let x = 2.0f64;
    let beta = 1.5f64;
    let expected = x / (1.0 + (-beta * x).exp());
    let e = evaluator(
        "swish",
        Role::Forward,
        &Binary32,
        &["beta=1.5"],
        ParamRounding::Exact,
    );
    let got = Binary32.to_f64(
        e.reference(Binary32.from_f64_exact(x).unwrap())
            .unwrap()
            .bits,
    );
    assert_eq!(got, expected as f32 as f64);
    assert_eq!(
        value("silu", Role::Forward, &Binary16, 1.0),
        value("swish", Role::Forward, &Binary16, 1.0)
    );
}

#[test]
fn exact_midpoints_round_to_even() {
    // hard-swish(3·2^-10) = 3·2^-11·(1 + 2^-10): exactly halfway between two binary16 values.
    let r = at("hard-swish", Role::Forward, &Binary16, 3.0 * 2f64.powi(-10));
    assert_eq!(r.bits, 0x1602);
    // leaky-relu with alpha = 0.5 is exact; alpha = 0.01 is the real 1/100, not a binary fraction.
    let e = evaluator(
        "leaky-relu",
        Role::Forward,
        &Binary16,
        &[],
        ParamRounding::Exact,
    );
    let y = e.reference(0xbc00).unwrap();
    assert_eq!(y.bits, 0xa11f); // RN(−0.01) in binary16 (numpy.float16(-0.01) gives 0xa11f).
}

#[test]
fn signed_zeros() {
    // Exact zero is +0 except f(−0) = −0 where f behaves like c·x near 0; an inexact tiny value
    // keeps its sign when it underflows (IEEE 754-2019 §6.3).
    let bits = |name, x: f64| at(name, Role::Forward, &Binary32, x).bits;
    assert_eq!(bits("tanh", -0.0), 0x8000_0000);
    assert_eq!(bits("gelu", -0.0), 0x8000_0000);
    assert_eq!(bits("elu", -0.0), 0x8000_0000);
    assert_eq!(bits("relu", -0.0), 0x0000_0000);
    assert_eq!(bits("relu", -5.0), 0x0000_0000);
    assert_eq!(bits("sigmoid", -200.0), 0x0000_0000);
    assert_eq!(bits("gelu", -20.0), 0x8000_0000);
    assert_eq!(bits("swish", -200.0), 0x8000_0000);
    assert_eq!(bits("log-sigmoid", 200.0), 0x8000_0000);
}

#[test]
fn subnormal_results_are_rounded_once() {
    // σ(−100) = 3.72e-44 lies among binary32 subnormals (quantum 2^-149). f64 libm gives it to
    // ~1e-16 relative, far closer than this value's distance to a rounding boundary.
    let expected = 1.0 / (1.0 + 100f64.exp());
    let q = expected / 2f64.powi(-149);
    assert!((q - q.round()).abs() < 0.49 && (q.fract() - 0.5).abs() > 1e-6);
    assert_eq!(
        value("sigmoid", Role::Forward, &Binary32, -100.0),
        (q.round() * 2f64.powi(-149))
    );
}

#[test]
fn saturation_keeps_the_binade_below_the_asymptote() {
    // σ(x) < 1 for every finite x, so ulp(y) is 2^-24 even where RN(y) = 1.
    for x in [20.0, 100.0, 1000.0, f32::MAX as f64] {
        let r = at("sigmoid", Role::Forward, &Binary32, x);
        assert_eq!(r.bits, 0x3f80_0000);
        assert_eq!(r.exact.unwrap().binade, -1, "x = {x}");
    }
    // gelu(512) = 512 − 512·Q(512), just below a power of two.
    let r = at("gelu", Role::Forward, &Binary16, 512.0);
    assert_eq!((r.bits, r.exact.unwrap().binade), (0x6000, 8));
    // elu(x) → −1 from above: |y| < 1.
    let r = at("elu", Role::Forward, &Binary32, -50.0);
    assert_eq!((r.bits, r.exact.unwrap().binade), (0xbf80_0000, -1));
}

#[test]
fn overflow_follows_the_ieee_threshold() {
    // selu(x) = λx overflows binary16 once λx ≥ 65504 + 16 = 65520 (IEEE 754-2019 §7.4).
    let lambda = 1.0507009873554805f64;
    let e = evaluator("selu", Role::Forward, &Binary16, &[], ParamRounding::Exact);
    let mut first_inf = None;
    for bits in 0x7000u32..0x7c00 {
        if e.reference(bits).unwrap().bits == 0x7c00 {
            first_inf = Some(bits);
            break;
        }
    }
    let first_inf = first_inf.unwrap();
    assert!(Binary16.to_f64(first_inf) * lambda >= 65520.0);
    assert!(Binary16.to_f64(first_inf - 1) * lambda < 65520.0);
}

#[test]
fn infinities_give_the_limits() {
    let e = |name| evaluator(name, Role::Forward, &Binary16, &[], ParamRounding::Exact);
    assert_eq!(e("sigmoid").reference(0x7c00).unwrap().bits, 0x3c00);
    assert_eq!(e("sigmoid").reference(0xfc00).unwrap().bits, 0x0000);
    assert_eq!(e("tanh").reference(0xfc00).unwrap().bits, 0xbc00);
    assert_eq!(e("elu").reference(0xfc00).unwrap().bits, 0xbc00);
    assert_eq!(e("relu").reference(0x7c00).unwrap().bits, 0x7c00);
    assert_eq!(e("gelu").reference(0xfc00).unwrap().bits, 0x8000);
    assert_eq!(e("log-sigmoid").reference(0xfc00).unwrap().bits, 0xfc00);
    assert_eq!(e("softsign").reference(0x7e00).unwrap().bits, 0x7e00);
}

#[test]
fn gradient_scale_multiplies_exactly() {
    // g·f′(x) with g = −2: relu′(1) = 1 → −2; σ′(0) = 1/4 → −1/2.
    let e = evaluator(
        "sigmoid",
        Role::Derivative,
        &Binary32,
        &[],
        ParamRounding::Exact,
    );
    let scaled = e.with_scale(Some(Rational::from(-2)));
    assert_eq!(Binary32.to_f64(scaled.reference(0).unwrap().bits), -0.5);
}

#[test]
fn bad_parameters_are_refused() {
    let f = lookup("elu").unwrap();
    for bad in [
        "alpha=nan",
        "alpha=abc",
        "beta=1",
        "alpha",
        "alpha=0",
        "alpha=-1",
        "alpha=1e99999",
    ] {
        assert!(
            Constants::parse_params(f, &[bad.to_string()]).is_err(),
            "{bad}"
        );
    }
    assert!(Constants::parse_params(f, &["alpha=0.5".to_string()]).is_ok());
}

#[test]
fn golden_tables_still_hold() {
    // Every 16-bit reference, checked once against the independent mpmath script
    // (tests/crosscheck) and committed; any change in rug/MPFR/GMP or the engine shows here.
    use std::path::Path;
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/golden");
    let mut checked = 0;
    for format in [&Binary16 as &'static dyn Format, &Bfloat16] {
        for f in catalog() {
            for role in [Role::Forward, Role::Derivative] {
                let name = format!(
                    "{}-{}-{}.u16.gz",
                    format.name(),
                    f.name(),
                    if role == Role::Forward {
                        "forward"
                    } else {
                        "derivative"
                    }
                );
                let table = read_table(&dir.join(&name));
                let e = Evaluator::new(
                    *f,
                    role,
                    Constants::resolve(*f, &[], ParamRounding::Exact, format),
                    format,
                );
                let ours: Vec<u16> = {
                    use rayon::prelude::*;
                    (0u32..65536)
                        .into_par_iter()
                        .map(|x| e.reference(x).unwrap().bits as u16)
                        .collect()
                };
                let diff = table.iter().zip(&ours).position(|(a, b)| a != b);
                assert!(
                    diff.is_none(),
                    "{name}: first difference at 0x{:04x}",
                    diff.unwrap_or(0)
                );
                checked += 1;
            }
        }
    }
    assert_eq!(checked, 2 * catalog().len() * 2);
}

fn read_table(path: &std::path::Path) -> Vec<u16> {
    use std::io::Read;
    let mut bytes = Vec::new();
    flate2::read::GzDecoder::new(std::fs::File::open(path).expect("golden table"))
        .read_to_end(&mut bytes)
        .unwrap();
    assert_eq!(bytes.len(), 131072);
    bytes
        .chunks_exact(2)
        .map(|c| u16::from_le_bytes([c[0], c[1]]))
        .collect()
}

#[test]
fn exact_zero_away_from_the_origin_is_positive() {
    // Found by the mpmath cross-check: hard-swish(x ≤ −3) is exactly 0, so +0, like its limit
    // at −∞; only f(−0) keeps the sign.
    for x in [-3.0, -5.0, -(f32::MAX as f64)] {
        assert_eq!(at("hard-swish", Role::Forward, &Binary32, x).bits, 0);
    }
    let e = evaluator(
        "leaky-relu",
        Role::Forward,
        &Binary16,
        &["alpha=0"],
        ParamRounding::Exact,
    );
    assert_eq!(e.reference(0xbc00).unwrap().bits, 0x0000);
    assert_eq!(e.reference(0x8000).unwrap().bits, 0x8000);
}

#[test]
fn asymptotes_off_the_format_grid_round_by_value_not_by_sign() {
    // elu with alpha = 1 + 2^-24 + 2^-40: −alpha lies 2^-40 beyond the binary32 midpoint
    // −(1 + 2^-24), so RN(−alpha) = −(1 + 2^-23); but at x = −20 the true value
    // −alpha + alpha·e^-20 is 2^-28.9 above −alpha, back across the midpoint: RN = −1.
    // (binary64 evaluation below is far more accurate than that 2^-29 margin.)
    let alpha = "1.0000000596055542700923979282379150390625"; // exact
    let e = evaluator(
        "elu",
        Role::Forward,
        &Binary32,
        &[&format!("alpha={alpha}")],
        ParamRounding::Exact,
    );
    let a = 1.0 + 2f64.powi(-24) + 2f64.powi(-40);
    for x in [-20.0f64, -25.0, -30.0, -60.0] {
        let expected = (-a + a * x.exp()) as f32;
        let got = e
            .reference(Binary32.from_f64_exact(x).unwrap())
            .unwrap()
            .bits;
        assert_eq!(got, expected.to_bits(), "x = {x}");
    }
}
