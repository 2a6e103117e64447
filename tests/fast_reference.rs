//! The fast reference path against the MPFR engine: every decided reference must equal the
//! engine's (bits, clamped binade and RN_binary64 approximation identical), over
//! random and hard inputs.  The engine itself is checked against mpmath and published values in
//! tests/reference.rs; here it is the oracle.
//!
//! `cargo test --release --test fast_reference` runs ~2·10^5 points per function;
//! `FAST_POINTS=10000000 cargo test --release --test fast_reference -- --ignored` runs the
//! large comparison.

use rayon::prelude::*;
use ulpgauge::activation::{lookup, Constants, Role};
use ulpgauge::format::{Bfloat16, Binary16, Binary32, Format};
use ulpgauge::reference::fast::FastEvaluator;
use ulpgauge::reference::{Evaluator, ParamRounding, Reference};

/// A small deterministic generator (SplitMix64), so failures reproduce.
struct Mix(u64);
impl Mix {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E3779B97F4A7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58476D1CE4E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D049BB133111EB);
        z ^ (z >> 31)
    }
    /// A uniform f32 pattern between two (same-sign, ordered by magnitude) f32 values.
    fn between(&mut self, a: f32, b: f32) -> u32 {
        let (lo, hi) = (a.to_bits().min(b.to_bits()), a.to_bits().max(b.to_bits()));
        lo + (self.next() % (hi - lo + 1) as u64) as u32
    }
}

fn evaluator(
    name: &str,
    role: Role,
    format: &'static dyn Format,
    params: &[&str],
) -> Evaluator<'static> {
    let f = lookup(name).unwrap();
    let (rounding, assignments) = rounding(params);
    let user = Constants::parse_params(f, &assignments).unwrap();
    Evaluator::new(
        f,
        role,
        Constants::resolve(f, &user, rounding, format),
        format,
    )
}

/// `param-rounding=f32` (`param-rounding=format`) among a test's parameters stands for
/// `--param-rounding f32` (`format`): SELU's constants then become binary64 numbers, its other
/// fast kind; the rest are parameters.
fn rounding(params: &[&str]) -> (ParamRounding, Vec<String>) {
    let rounding = if params.contains(&F32_ROUNDED) {
        ParamRounding::F32
    } else if params.contains(&FORMAT_ROUNDED) {
        ParamRounding::Format
    } else {
        ParamRounding::Exact
    };
    let rest = params
        .iter()
        .filter(|p| **p != F32_ROUNDED && **p != FORMAT_ROUNDED);
    (rounding, rest.map(|s| s.to_string()).collect())
}

/// See [`rounding`].
const F32_ROUNDED: &str = "param-rounding=f32";
/// See [`rounding`].
const FORMAT_ROUNDED: &str = "param-rounding=format";

/// The exact value at 256 bits, straight from the definitions (only for approximation checks;
/// β and α as f64; SELU's λ and α, GELU-tanh's c and k rounded to binary32 when
/// `f32_constants`).
fn truth(name: &str, role: Role, x: f64, param: f64, f32_constants: bool) -> f64 {
    use rug::Float;
    let p = 256;
    let x = Float::with_val(p, x);
    let sig = |z: &Float| Float::with_val(p, 1) / (Float::with_val(p, -z).exp() + 1u32);
    let v = match (name, role) {
        ("sigmoid", Role::Forward) => sig(&x),
        // σ(x)·σ(−x) and sech²: no cancellation at large |x|.
        ("sigmoid", Role::Derivative) => {
            Float::with_val(p, sig(&x) * sig(&Float::with_val(p, -&x)))
        }
        ("tanh", Role::Forward) => x.clone().tanh(),
        ("tanh", Role::Derivative) => x.clone().sech().square(),
        ("swish" | "silu", r) => {
            let z = Float::with_val(p, &x * param);
            let s = sig(&z);
            if r == Role::Forward {
                Float::with_val(p, &x * &s)
            } else {
                let one_minus = sig(&Float::with_val(p, -&z));
                Float::with_val(p, &s * (Float::with_val(p, &z * &one_minus) + 1u32))
            }
        }
        ("elu", Role::Forward) if x > 0 => x.clone(),
        ("elu", Role::Derivative) if x >= 0 => Float::with_val(p, 1),
        ("elu", Role::Forward) => Float::with_val(p, x.clone().exp_m1() * param),
        ("elu", Role::Derivative) => Float::with_val(p, x.clone().exp() * param),
        ("gelu", r) => {
            let sqrt2 = Float::with_val(p, 2).sqrt();
            let cdf = Float::with_val(p, (Float::with_val(p, -&x) / &sqrt2).erfc() / 2u32);
            if r == Role::Forward {
                Float::with_val(p, &x * &cdf)
            } else {
                let pi2 = Float::with_val(p, rug::float::Constant::Pi) * 2u32;
                let dens = Float::with_val(p, -x.clone().square() / 2u32).exp() / pi2.sqrt();
                cdf + Float::with_val(p, &x * &dens)
            }
        }
        ("softplus", Role::Forward) => x.clone().exp().ln_1p(),
        ("softplus", Role::Derivative) => sig(&x),
        ("log-sigmoid", Role::Forward) => -Float::with_val(p, -&x).exp().ln_1p(),
        ("log-sigmoid", Role::Derivative) => sig(&Float::with_val(p, -&x)),
        ("mish", r) => {
            let sp = x.clone().exp().ln_1p();
            let th = sp.clone().tanh();
            if r == Role::Forward {
                Float::with_val(p, &x * &th)
            } else {
                let sech2 = sp.sech().square();
                th + Float::with_val(p, &x * &sech2) * sig(&x)
            }
        }
        ("selu", r) => {
            // The published decimals (Klambauer et al. 2017), exact, or rounded to nearest
            // binary32 (the tests' --param-rounding f32).
            let round = |d: &str| {
                if f32_constants {
                    Float::with_val(p, d.parse::<f32>().unwrap())
                } else {
                    Float::with_val(p, Float::parse(d).unwrap())
                }
            };
            let lambda = round("1.0507009873554804934193349852946");
            let alpha = round("1.6732632423543772848170429916717");
            match r {
                Role::Forward if x > 0 => Float::with_val(p, &x * &lambda),
                Role::Derivative if x >= 0 => lambda,
                Role::Forward => Float::with_val(p, x.clone().exp_m1() * lambda * alpha),
                Role::Derivative => Float::with_val(p, x.clone().exp() * lambda * alpha),
            }
        }
        ("celu", r) => {
            let z = Float::with_val(p, &x / param);
            match r {
                Role::Forward if x > 0 => x.clone(),
                Role::Derivative if x > 0 => Float::with_val(p, 1),
                Role::Forward => Float::with_val(p, z.exp_m1() * param),
                Role::Derivative => z.exp(),
            }
        }
        ("gelu-tanh", r) => {
            let pi = Float::with_val(p, rug::float::Constant::Pi);
            let c = Float::with_val(p, Float::with_val(p, 2) / pi).sqrt();
            let k = Float::with_val(p, 44715) / 1_000_000u32;
            // --param-rounding f32: both constants rounded to nearest binary32.
            let (c, k) = if f32_constants {
                (
                    Float::with_val(p, c.to_f32()),
                    Float::with_val(p, k.to_f32()),
                )
            } else {
                (c, k)
            };
            let x2 = Float::with_val(p, x.square_ref());
            let u = Float::with_val(p, &x + Float::with_val(p, &x2 * &x) * &k) * &c;
            let s = sig(&Float::with_val(p, &u * 2u32));
            if r == Role::Forward {
                Float::with_val(p, &x * &s)
            } else {
                let g = (Float::with_val(p, &x2 * &k) * 3u32 + 1u32) * &c * 2u32;
                let one_minus = Float::with_val(p, 1u32 - &s);
                let corr = Float::with_val(p, &x * &g) * &s * &one_minus;
                s + corr
            }
        }
        _ => unreachable!(),
    };
    v.to_f64()
}

/// Bits, binade and approximation (RN_binary64 of the exact value, on both paths) must be
/// identical; the 256-bit truth is kept as a cross-check of the approximation itself.
fn same(a: &Reference, b: &Reference, truth: impl Fn() -> f64) -> bool {
    if a.bits != b.bits {
        return false;
    }
    match (a.exact, b.exact) {
        (Some(x), Some(y)) => {
            let close = |u: f64, v: f64| {
                let scale = u.abs().max(v.abs());
                (u - v).abs() <= (scale * 2.0f64.powi(-52)).max(2.0f64.powi(-1074))
            };
            x.binade == y.binade
                && x.approx.to_bits() == y.approx.to_bits()
                && close(x.approx, truth())
        }
        (None, None) => true,
        _ => false,
    }
}

/// Compares fast and MPFR on the inputs; returns (decided, total), panics on a mismatch.
fn compare(
    name: &str,
    role: Role,
    format: &'static dyn Format,
    params: &[&str],
    inputs: &[u32],
) -> (usize, usize) {
    let e = evaluator(name, role, format, params);
    let f32_constants = params.contains(&F32_ROUNDED);
    let param = params
        .iter()
        .find(|a| **a != F32_ROUNDED)
        .map(|a| a.split_once('=').unwrap().1.parse::<f64>().unwrap())
        .unwrap_or(1.0);
    let fast =
        FastEvaluator::new(&e).unwrap_or_else(|| panic!("{name} {params:?} has a fast path"));
    let decided: usize = inputs
        .par_iter()
        .map(|&x| match fast.try_reference(x) {
            Some(r) => {
                let m = e.reference(x).unwrap();
                assert!(
                    same(&r, &m, || truth(
                        name,
                        role,
                        format.to_f64(x),
                        param,
                        f32_constants
                    )),
                    "{name} {role:?} {} {params:?} at {:#x} ({}): fast {r:?} vs mpfr {m:?}",
                    format.name(),
                    x,
                    format.to_f64(x)
                );
                1
            }
            None => 0,
        })
        .sum();
    (decided, inputs.len())
}

/// Inputs: the [1, 2) binade, all patterns, and the hard regions of each function.
fn inputs(name: &str, n: usize, seed: u64) -> Vec<u32> {
    let mut g = Mix(seed);
    let mut v = Vec::with_capacity(n);
    let part = n / 8;
    for _ in 0..part {
        v.push(g.between(1.0, 2.0)); // the benchmark binade
    }
    for _ in 0..part {
        v.push(g.next() as u32); // every pattern, NaNs and tails included
    }
    for _ in 0..part {
        let sign = if g.next() % 2 == 0 { 0 } else { 0x8000_0000 };
        v.push(sign | g.between(1e-45, 1e-3)); // tiny inputs: values near 1/2, 1/4, 1, x
    }
    for _ in 0..part {
        v.push(g.between(1e-3, 8.0) ^ (g.next() as u32 & 0x8000_0000)); // the body
    }
    // Hard regions per function: cancellation, subnormal outputs, range limits, tails.
    let hard: &[(f32, f32)] = match name {
        "sigmoid" => &[
            (-104.0, -85.0),
            (-800.0, -590.0),
            (590.0, 800.0),
            (4000.0, 4100.0),
            (-4100.0, -4000.0),
            (0.9, 1.1),
            (-1.1, -0.9),
        ],
        "tanh" => &[
            (0.45, 0.55),
            (-0.55, -0.45),
            (0.9, 1.1),
            (-1.1, -0.9),
            (8.0, 10.0),
            (290.0, 310.0),
            (4000.0, 4100.0),
        ],
        "swish" | "silu" => &[
            (-1.3, -1.25),
            (1.25, 1.3),
            (-110.0, -85.0),
            (-900.0, -590.0),
            (0.9, 1.1),
            (-1.1, -0.9),
            (4000.0, 4100.0),
            (-4100.0, -4000.0),
            (16.0, 80.0),
        ],
        "elu" => &[
            (-1.1, -0.9),
            (-20.0, -15.0),
            (-110.0, -85.0),
            (-800.0, -590.0),
            (-4100.0, -4000.0),
            (-0.07, -0.05),
        ],
        "gelu" => &[
            (-0.76, -0.74),
            (-4.5, -3.5),
            (3.5, 4.5),
            (-14.5, -12.5),
            (-40.0, -20.0),
            (-4100.0, -40.0),
            (5.0, 12.0),
            (4000.0, 4100.0),
        ],
        "softplus" => &[
            (-800.0, -590.0),
            (-104.0, -85.0),
            (30.0, 45.0),
            (0.9, 1.1),
            (-1.1, -0.9),
            (4000.0, 4100.0),
            (-4100.0, -4000.0),
        ],
        "log-sigmoid" => &[
            (590.0, 800.0),
            (85.0, 104.0),
            (-45.0, -30.0),
            (0.9, 1.1),
            (-1.1, -0.9),
            (4000.0, 4100.0),
            (-4100.0, -4000.0),
        ],
        "mish" => &[
            (-1.3, -1.1),
            (-800.0, -590.0),
            (-60.0, -30.0),
            (15.0, 25.0),
            (0.9, 1.1),
            (-1.1, -0.9),
            (4000.0, 4100.0),
            (-4100.0, -4000.0),
        ],
        "selu" | "celu" => &[
            (-1.1, -0.9),
            (-20.0, -15.0),
            (-45.0, -30.0),
            (-110.0, -85.0),
            (-800.0, -590.0),
            (-4100.0, -4000.0),
            (-0.07, -0.05),
        ],
        "gelu-tanh" => &[
            (-0.8, -0.7),
            (-25.0, -15.0),
            (5.0, 10.0),
            (0.9, 1.1),
            (-1.1, -0.9),
            (4000.0, 4100.0),
            (-4100.0, -4000.0),
        ],
        _ => &[],
    };
    let rest = n - v.len();
    for i in 0..rest {
        let (a, b) = hard[i % hard.len()];
        v.push(g.between(a, b));
    }
    v
}

fn run(name: &str, params: &[&str], n: usize) -> Vec<(Role, usize, usize, usize, usize)> {
    let mut out = Vec::new();
    for role in [Role::Forward, Role::Derivative] {
        let (d, t) = compare(
            name,
            role,
            &Binary32,
            params,
            &inputs(name, n / 2, 7 + role as u64),
        );
        let binade: Vec<u32> = inputs(name, 8 * (n / 16), 99)
            .into_iter()
            .take(n / 16)
            .collect();
        let (d1, t1) = compare(name, role, &Binary32, params, &binade);
        out.push((role, d, t, d1, t1));
    }
    out
}

fn check(name: &str, params: &[&str], n: usize) {
    for (role, d, t, d1, t1) in run(name, params, n) {
        eprintln!(
            "{name} {params:?} {role:?}: decided {d}/{t} ({:.5}%), on [1,2): {d1}/{t1} ({:.5}%)",
            100.0 * d as f64 / t as f64,
            100.0 * d1 as f64 / t1 as f64
        );
        // Inputs the fast path declines by design (±0, NaN, ±∞, the band just outside the
        // double-word exponent range) are a small share of every sample.
        assert!(
            d as f64 >= 0.97 * t as f64,
            "{name} {role:?}: too few decided"
        );
        assert!(
            d1 as f64 >= 0.999 * t1 as f64,
            "{name} {role:?}: too few decided on [1,2)"
        );
    }
}

/// Exhaustive over the 16-bit formats: every pattern, compared where decided.
fn exhaustive16(name: &str, params: &[&str]) {
    let all: Vec<u32> = (0..65536).collect();
    for format in [&Binary16 as &'static dyn Format, &Bfloat16] {
        for role in [Role::Forward, Role::Derivative] {
            let (d, t) = compare(name, role, format, params, &all);
            eprintln!(
                "{name} {params:?} {role:?} {}: decided {d}/{t}",
                format.name()
            );
            // Near overflow (alpha = 70000 in f16) the fast path declines by design.
            let floor = if params.is_empty() { 0.95 } else { 0.5 };
            assert!(d as f64 >= floor * t as f64);
        }
    }
}

const SMALL: usize = 200_000;

#[test]
fn sigmoid_fast_matches_mpfr() {
    check("sigmoid", &[], SMALL);
    exhaustive16("sigmoid", &[]);
}

#[test]
fn tanh_fast_matches_mpfr() {
    check("tanh", &[], SMALL);
    exhaustive16("tanh", &[]);
}

#[test]
fn swish_fast_matches_mpfr() {
    check("swish", &[], SMALL / 2);
    check("silu", &[], SMALL / 4);
    check("swish", &["beta=1.5"], SMALL / 8);
    check("swish", &["beta=0.375"], SMALL / 8);
    exhaustive16("swish", &[]);
}

#[test]
fn elu_fast_matches_mpfr() {
    check("elu", &[], SMALL / 2);
    check("elu", &["alpha=0.25"], SMALL / 4);
    check("elu", &["alpha=1.75"], SMALL / 4);
    exhaustive16("elu", &[]);
    exhaustive16("elu", &["alpha=70000"]);
}

#[test]
fn gelu_fast_matches_mpfr() {
    check("gelu", &[], SMALL);
    exhaustive16("gelu", &[]);
}

#[test]
fn softplus_log_sigmoid_fast_matches_mpfr() {
    check("softplus", &[], SMALL / 4);
    check("log-sigmoid", &[], SMALL / 4);
    exhaustive16("softplus", &[]);
    exhaustive16("log-sigmoid", &[]);
}

#[test]
fn mish_fast_matches_mpfr() {
    check("mish", &[], SMALL / 4);
    exhaustive16("mish", &[]);
}

#[test]
fn selu_celu_fast_matches_mpfr() {
    // The published λ and α (double-word constants) and the same rounded to f32 (exact f64).
    check("selu", &[], SMALL / 4);
    check("selu", &[F32_ROUNDED], SMALL / 8);
    check("celu", &[], SMALL / 8);
    check("celu", &["alpha=0.25"], SMALL / 16);
    check("celu", &["alpha=1.75"], SMALL / 16);
    check(
        "celu",
        &["alpha=3.29999999999999982236431605997495353221893310546875"],
        SMALL / 16,
    );
    exhaustive16("selu", &[]);
    exhaustive16("selu", &[F32_ROUNDED]);
    exhaustive16("celu", &[]);
    exhaustive16("celu", &["alpha=0.25"]);
}

#[test]
fn gelu_tanh_fast_matches_mpfr() {
    check("gelu-tanh", &[], SMALL / 4);
    exhaustive16("gelu-tanh", &[]);
}

#[test]
fn inexact_parameters_have_no_fast_path() {
    // 0.1 is not a binary64 number: the fast path declines and MPFR handles it.
    let e = evaluator("elu", Role::Forward, &Binary32, &["alpha=0.1"]);
    assert!(FastEvaluator::new(&e).is_none());
    let e = evaluator("celu", Role::Forward, &Binary32, &["alpha=0.1"]);
    assert!(FastEvaluator::new(&e).is_none());
}

/// The large comparison: FAST_POINTS (default 10^7) points per function, both roles.
#[test]
#[ignore]
fn large_comparison() {
    let n: usize = std::env::var("FAST_POINTS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(10_000_000);
    let only = std::env::var("FAST_ONLY").ok();
    for name in [
        "sigmoid",
        "tanh",
        "swish",
        "elu",
        "gelu",
        "softplus",
        "log-sigmoid",
        "mish",
        "selu",
        "celu",
        "gelu-tanh",
    ] {
        if only.as_deref().is_some_and(|o| o != name) {
            continue;
        }
        check(name, &[], n);
    }
}

// The closed-form regions (tails and tiny inputs decided without exp): at each region's edges,
// a few hundred patterns on both sides, and random points inside each region, where every
// point must be decided.

/// The 2k + 1 patterns of `format` around v (the largest value ≤ v in the middle).
fn neighbours(format: &'static dyn Format, v: f64, k: i64) -> Vec<u32> {
    let top = format.ordinal(format.max_finite(false));
    let value = |o: i64| format.to_f64(format.from_ordinal(o));
    let (mut lo, mut hi) = (-top, top);
    while lo < hi {
        let mid = lo + (hi - lo + 1) / 2;
        if value(mid) <= v {
            lo = mid;
        } else {
            hi = mid - 1;
        }
    }
    ((lo - k).max(-top)..=(lo + k).min(top))
        .map(|o| format.from_ordinal(o))
        .collect()
}

/// One closed-form region: its edges (signed values where the region starts) and the ranges
/// (same-sign f32 ends, ordered by magnitude) lying wholly inside it.
struct Region {
    edges: Vec<f64>,
    inside: Vec<(f32, f32)>,
}

/// The closed-form regions of src/reference/fast (thresholds restated here, not imported);
/// `beta` is swish's β or ELU's α.
fn regions(name: &str, role: Role, beta: f64) -> Vec<Region> {
    match (name, role) {
        ("sigmoid", Role::Forward) => vec![
            Region {
                edges: vec![38.0],
                inside: vec![(38.001, 4095.0)],
            },
            Region {
                edges: vec![-745.2],
                inside: vec![(-745.21, -4095.0)],
            },
            Region {
                edges: vec![1.1102230246251565e-16, -1.1102230246251565e-16],
                inside: vec![(1e-45, 1.11e-16), (-1e-45, -1.11e-16)],
            },
        ],
        ("sigmoid", Role::Derivative) => vec![
            Region {
                edges: vec![745.2, -745.2],
                inside: vec![(745.21, 4095.0), (-745.21, -4095.0)],
            },
            Region {
                edges: vec![1.4901161193847656e-8, -1.4901161193847656e-8],
                inside: vec![(1e-45, 1.4901e-8), (-1e-45, -1.4901e-8)],
            },
        ],
        ("tanh", Role::Forward) => vec![
            Region {
                edges: vec![19.5, -19.5],
                inside: vec![(19.501, 4095.0), (-19.501, -4095.0)],
            },
            Region {
                edges: vec![7.450580596923828e-9, -7.450580596923828e-9],
                inside: vec![(1e-45, 7.4505e-9), (-1e-45, -7.4505e-9)],
            },
        ],
        ("tanh", Role::Derivative) => vec![
            Region {
                edges: vec![373.5, -373.5],
                inside: vec![(373.51, 4095.0), (-373.51, -4095.0)],
            },
            Region {
                edges: vec![7.450580596923828e-9, -7.450580596923828e-9],
                inside: vec![(1e-45, 7.4505e-9), (-1e-45, -7.4505e-9)],
            },
        ],
        ("gelu", Role::Forward | Role::Derivative) => vec![
            Region {
                edges: vec![2.7755575615628914e-17, -2.7755575615628914e-17],
                inside: vec![(1e-45, 2.775e-17), (-1e-45, -2.775e-17)],
            },
            Region {
                edges: vec![9.0],
                inside: vec![(9.001, 4095.0)],
            },
            Region {
                edges: vec![-38.8],
                inside: vec![(-38.81, -4095.0)],
            },
        ],
        ("softplus", Role::Forward) => vec![Region {
            edges: vec![38.0, -745.2],
            inside: vec![(38.001, 4095.0), (-745.21, -4095.0)],
        }],
        ("softplus", Role::Derivative) => regions("sigmoid", Role::Forward, beta),
        ("log-sigmoid", Role::Forward) => vec![Region {
            edges: vec![-38.0, 745.2],
            inside: vec![(-38.001, -4095.0), (745.21, 4095.0)],
        }],
        ("log-sigmoid", Role::Derivative) => regions("sigmoid", Role::Forward, beta)
            .into_iter()
            .map(|r| Region {
                edges: r.edges.iter().map(|e| -e).collect(),
                inside: r.inside.iter().map(|&(a, b)| (-a, -b)).collect(),
            })
            .collect(),
        ("mish", _) => {
            let right = if role == Role::Forward { 20.0 } else { 22.0 };
            vec![Region {
                edges: vec![right, -753.0],
                inside: vec![(right as f32 * 1.0001, 4095.0), (-753.01, -4095.0)],
            }]
        }
        ("gelu-tanh", _) => vec![Region {
            edges: vec![1.3877787807814457e-17, -1.3877787807814457e-17, 8.0, -22.0],
            inside: vec![
                (1e-45, 1.3877e-17),
                (-1e-45, -1.3877e-17),
                (8.001, 4095.0),
                (-22.001, -4095.0),
            ],
        }],
        // SELU is ELU with α' = λα (binary32 roundings: λα ≈ 1.758, ilogb 0) on x ≤ 0.
        ("selu", _) => regions("elu", role, 1.7580993408473766),
        ("celu", _) => {
            // Thresholds on z = x/α (with the margins of the computed quotient), scaled to x.
            let z_edges: &[f64] = match role {
                Role::Forward => &[-2.7755575615628914e-17, -38.3],
                Role::Derivative => &[-2.7755575615628914e-17, -745.3],
            };
            let far = z_edges[1] * 1.0001;
            let tiny = (2.775e-17 * beta) as f32;
            vec![Region {
                edges: z_edges.iter().map(|z| z * beta).collect(),
                inside: vec![
                    (-1e-45, -tiny),
                    ((far * beta) as f32, (-4095.0 * beta) as f32),
                ],
            }]
        }
        ("elu", Role::Forward) => vec![Region {
            edges: vec![-38.2],
            inside: vec![(-38.21, -4095.0)],
        }],
        ("elu", Role::Derivative) => {
            // The left cut depends on α: −(1076 + ilogb α)·0.6932; the caller passes α as beta.
            let cut = -((1076 + ilogb(beta)) as f64) * 0.6932;
            let inner = (cut - 0.01) as f32;
            vec![
                Region {
                    edges: vec![-2.7755575615628914e-17],
                    inside: vec![(-1e-45, -2.775e-17)],
                },
                Region {
                    edges: vec![cut],
                    inside: vec![(inner, -4095.0)],
                },
            ]
        }
        ("swish" | "silu", _) => {
            // Thresholds on z = βx, scaled to x.
            let z_edges: &[f64] = match role {
                Role::Forward => &[5.551115123125783e-17, -5.551115123125783e-17, 39.0, -835.0],
                Role::Derivative => &[5.551115123125783e-17, -5.551115123125783e-17, 42.0, -753.0],
            };
            let (far_pos, far_neg) = match role {
                Role::Forward => (39.0, -835.0),
                Role::Derivative => (42.0, -753.0),
            };
            let in_f32 = |v: f64| v.abs() < f32::MAX as f64 && v.abs() > 1e-45;
            let edges: Vec<f64> = z_edges
                .iter()
                .map(|z| z / beta)
                .filter(|&v| in_f32(v))
                .collect();
            let tiny = (5.5e-17 / beta) as f32;
            let mut inside = vec![(1e-45f32, tiny), (-1e-45, -tiny)];
            for (z, tail) in [(far_pos * 1.001, 4095.0), (far_neg * 1.001, -4095.0)] {
                let (a, b) = (z / beta, tail / beta);
                if in_f32(a) && in_f32(b) {
                    inside.push((a as f32, b as f32));
                }
            }
            inside.retain(|&(a, b)| a.is_finite() && b.is_finite() && a != 0.0);
            vec![Region { edges, inside }]
        }
        _ => vec![],
    }
}

/// ⌊log2 |x|⌋ of a normal f64.
fn ilogb(x: f64) -> i32 {
    ((x.to_bits() >> 52) & 0x7ff) as i32 - 1023
}

/// Edges (±300 patterns, every format) and random inside points (all decided, binary32).
fn closed_regions(name: &str, params: &[&str]) {
    let param = params
        .iter()
        .find(|a| **a != F32_ROUNDED)
        .map(|a| a.split_once('=').unwrap().1.parse::<f64>().unwrap())
        .unwrap_or(1.0);
    let mut g = Mix(2024);
    for role in [Role::Forward, Role::Derivative] {
        let regions = regions(name, role, param);
        assert!(!regions.is_empty());
        for format in [&Binary32 as &'static dyn Format, &Binary16, &Bfloat16] {
            let mut edge_inputs = Vec::new();
            for r in &regions {
                for &e in &r.edges {
                    edge_inputs.extend(neighbours(format, e, 300));
                }
            }
            let (d, t) = compare(name, role, format, params, &edge_inputs);
            eprintln!(
                "{name} {params:?} {role:?} {}: edges decided {d}/{t}",
                format.name()
            );
        }
        let mut inside = Vec::new();
        for r in &regions {
            for &(a, b) in &r.inside {
                for _ in 0..400 {
                    inside.push(g.between(a, b));
                }
            }
        }
        let (d, t) = compare(name, role, &Binary32, params, &inside);
        assert_eq!(d, t, "{name} {params:?} {role:?}: a closed region declined");
    }
}

#[test]
fn closed_regions_sigmoid_tanh() {
    closed_regions("sigmoid", &[]);
    closed_regions("tanh", &[]);
}

#[test]
fn closed_regions_swish() {
    closed_regions("silu", &[]);
    closed_regions("swish", &[]);
    closed_regions("swish", &["beta=1.5"]);
    closed_regions("swish", &["beta=0.375"]);
    closed_regions("swish", &["beta=10000000000"]);
    closed_regions(
        "swish",
        &["beta=0.0000000000000000008673617379884035472059622406959533691406250"],
    );
}

#[test]
fn closed_regions_exp_log() {
    closed_regions("softplus", &[]);
    closed_regions("log-sigmoid", &[]);
    closed_regions("mish", &[]);
    closed_regions("gelu-tanh", &[]);
    closed_regions("selu", &[]);
    closed_regions("celu", &[]);
    closed_regions("celu", &["alpha=0.25"]);
    closed_regions("celu", &["alpha=1.75"]);
}

#[test]
fn closed_regions_gelu_elu() {
    closed_regions("gelu", &[]);
    closed_regions("elu", &[]);
    closed_regions("elu", &["alpha=0.25"]);
    closed_regions("elu", &["alpha=1.75"]);
}

/// `binade_count` binades of each sign from 2^`lowest`: `per` random binary32 patterns each.
fn per_binade(g: &mut Mix, lowest: i32, binade_count: i32, per: usize) -> Vec<u32> {
    let mut v = Vec::new();
    for e in lowest..lowest + binade_count {
        for sign in [1.0f32, -1.0] {
            let lo = sign * 2f32.powi(e);
            let hi = f32::from_bits((2.0 * lo).to_bits() - 1);
            v.extend((0..per).map(|_| g.between(lo, hi)));
        }
    }
    v
}

/// Binary32 inputs with at most 8 significant bits in every binade from 2^`lowest` to 2^−7,
/// both signs, and odd multiples of 2^−52, 2^−27, 2^−26, 2^−24 and 2^−23 below 2^−6: there
/// leading parts such as 1/2 + x/4, 1 − x², 1/4 − x²/16 or x/2 + x²/4 land exactly on binary64
/// or binary32 midpoints and powers of two, so only the rest's sign decides.
fn short_patterns(lowest: i32) -> Vec<u32> {
    let mut v = Vec::new();
    for e in lowest..-6 {
        for m in 0u32..128 {
            let x = 2f32.powi(e) * (1.0 + m as f32 / 128.0);
            v.extend([x.to_bits(), (-x).to_bits()]);
        }
    }
    for unit in [-52, -27, -26, -24, -23] {
        for k in (1u32..4000).step_by(2) {
            let x = k as f64 * 2f64.powi(unit);
            if x < 2f64.powi(-6) && x >= 2f64.powi(lowest) {
                v.extend([(x as f32).to_bits(), (-x as f32).to_bits()]);
            }
        }
    }
    v
}

/// The leading-term bands (below 2^−6, past the closed forms): an exact leading part plus a
/// binary64 rest, both roles, every binade and both signs (300 random patterns each), the short
/// patterns where the leading part is a rounding boundary, and each band's lower edge ±300
/// patterns in every format, against the engine.
#[test]
fn leading_term_bands() {
    let mut g = Mix(77);
    for (name, params, lowest) in [
        ("sigmoid", &[][..], -53),
        ("tanh", &[], -27),
        ("silu", &[], -54),
        ("swish", &["beta=1.5"][..], -54),
        ("gelu", &[], -55),
    ] {
        let mut inside = per_binade(&mut g, lowest, -6 - lowest, 300);
        inside.extend(short_patterns(lowest));
        let (low, high) = (2f64.powi(lowest), 2f64.powi(-6));
        for role in [Role::Forward, Role::Derivative] {
            check_band(name, role, params, &inside, &[low, -low, high, -high]);
        }
    }
}

/// A band against MPFR: its inside points (at least 99.9% decided) in binary32, then ±300
/// patterns around each edge value in every format.
fn check_band(name: &str, role: Role, params: &[&str], inside: &[u32], edges: &[f64]) {
    let (d, t) = compare(name, role, &Binary32, params, inside);
    eprintln!("{name} {params:?} {role:?} leading-term band: decided {d}/{t}");
    assert!(
        d as f64 >= 0.999 * t as f64,
        "{name} {params:?} {role:?}: {d}/{t} decided"
    );
    for format in [&Binary32 as &'static dyn Format, &Binary16, &Bfloat16] {
        let around: Vec<u32> = edges
            .iter()
            .flat_map(|&e| neighbours(format, e, 300))
            .collect();
        let (d, t) = compare(name, role, format, params, &around);
        eprintln!(
            "{name} {params:?} {role:?} {}: edges decided {d}/{t}",
            format.name()
        );
    }
}

/// ELU's leading-term bands (forward −2^−8 ≤ x < 0 from the subnormals up, derivative
/// −2^−20 ≤ x ≤ −2^−55): every binade (200 random patterns each, negative side), the short
/// patterns, the bands' ends ±300 patterns in every format, α = 1, 0.5 and the binary64
/// nearest 1.7 (53 significant bits, so α·x is inexact).
#[test]
fn elu_leading_term_bands() {
    let mut g = Mix(81);
    let long = "alpha=1.70000000000000017763568394002504646778106689453125";
    for alpha in ["alpha=1", "alpha=0.5", long] {
        for (role, lowest, top) in [(Role::Forward, -126, -8), (Role::Derivative, -55, -20)] {
            let mut inside = per_binade(&mut g, lowest, top - lowest, 200);
            inside.extend(short_patterns(lowest));
            if role == Role::Forward {
                // Subnormal inputs.
                inside.extend((0..2000).map(|_| 0x8000_0001 + (g.next() % 0x7f_ffff) as u32));
            }
            inside.retain(|&x| f32::from_bits(x) < 0.0 && f32::from_bits(x) >= -(2f32.powi(top)));
            let edges = [-(2f64.powi(lowest.max(-60))), -(2f64.powi(top))];
            check_band("elu", role, &[alpha], &inside, &edges);
        }
    }
}

/// Mish's and GELU-tanh's tiny-input bands (|x| < 2^−6, no exp; src/reference/fast/mish.rs
/// and gelu_tanh.rs): every binade of either sign (300 random binary32 patterns each) from
/// 2^−126 (mish, plus random subnormals) or 2^−56 (GELU-tanh, whose closed form takes the
/// inputs below), the short patterns where leading parts such as x/2 + c·x²/2, 1/2 + c·x or
/// 3x/5 land on rounding boundaries (multiples of 5 among them make 3x/5 exact), and the
/// bands' edges (mish's sub-bands' too) ±300 patterns in every format, both roles, against the
/// engine; GELU-tanh also
/// with its constants rounded to binary32 (exact binary64 numbers, the bound without their r).
#[test]
fn mish_gelu_tanh_bands() {
    let mut g = Mix(83);
    for (name, params, lowest) in [
        ("mish", &[][..], -126),
        ("gelu-tanh", &[], -56),
        ("gelu-tanh", &[F32_ROUNDED][..], -56),
    ] {
        let mut inside = per_binade(&mut g, lowest, -6 - lowest, 300);
        inside.extend(short_patterns(lowest));
        if name == "mish" {
            let sign = |g: &mut Mix| (g.next() as u32) & 0x8000_0000;
            inside.extend((0..4000).map(|_| sign(&mut g) | (1 + (g.next() % 0x7f_ffff) as u32)));
        }
        let (low, high) = (2f64.powi(lowest), 2f64.powi(-6));
        let mut edges = vec![low, -low, high, -high];
        if name == "mish" {
            // The sub-bands' edges: 2^−20 (exact leading part below) and 2^−57 (mish′ beside
            // 0.6 below).
            edges.extend([
                2f64.powi(-20),
                -(2f64.powi(-20)),
                2f64.powi(-57),
                -(2f64.powi(-57)),
            ]);
        }
        for role in [Role::Forward, Role::Derivative] {
            check_band(name, role, params, &inside, &edges);
        }
    }
}

/// Softplus' and log-sigmoid's series band (forward, 0 < |x| < 2^−4, ln 2 + x/2 + ln cosh(x/2)
/// without exp or log; src/reference/fast/softplus.rs): every binade of either sign from 2^−126
/// (300 random binary32 patterns each), random subnormals, the short patterns (x/2 and x²/8
/// with few bits), and the band's edges (2^−4, and 2^−126 where the subnormals begin) ±300
/// patterns in every format, against the engine.
#[test]
fn softplus_log_sigmoid_bands() {
    let mut g = Mix(85);
    let lowest = -126;
    let mut inside = per_binade(&mut g, lowest, -4 - lowest, 300);
    inside.extend(short_patterns(lowest));
    let sign = |g: &mut Mix| (g.next() as u32) & 0x8000_0000;
    inside.extend((0..4000).map(|_| sign(&mut g) | (1 + (g.next() % 0x7f_ffff) as u32)));
    let (low, high) = (2f64.powi(lowest), 2f64.powi(-4));
    for name in ["softplus", "log-sigmoid"] {
        check_band(name, Role::Forward, &[], &inside, &[low, -low, high, -high]);
    }
}

/// e^a − 1 for |a| < 1/16 sums its high-order terms in f64: every binade of 2^−40 ≤ |x| < 1
/// of the functions built on it, both roles, against the engine.
#[test]
fn short_expm1_series_bands() {
    let mut g = Mix(78);
    let inputs = per_binade(&mut g, -40, 40, 200);
    for (name, params) in [
        ("sigmoid", &[][..]),
        ("tanh", &[]),
        ("silu", &[]),
        ("swish", &["beta=1.5"][..]),
        ("elu", &["alpha=0.5"][..]),
    ] {
        for role in [Role::Forward, Role::Derivative] {
            let (d, t) = compare(name, role, &Binary32, params, &inputs);
            eprintln!("{name} {role:?} short expm1 bands: decided {d}/{t}");
            assert!(
                d as f64 >= 0.995 * t as f64,
                "{name} {role:?}: {d}/{t} decided"
            );
        }
    }
}

/// GELU per binade from 2^−40 (the leading-term band below 2^−6, the Mills-ratio table above)
/// and across the table's far end (4 < |x| < 38.8), both roles.
#[test]
fn gelu_band_and_mills_table() {
    let mut g = Mix(79);
    let mut inputs = per_binade(&mut g, -40, 42, 200);
    for _ in 0..3000 {
        inputs.push(g.between(4.0, 38.8));
        inputs.push(g.between(-4.0, -38.8));
    }
    for role in [Role::Forward, Role::Derivative] {
        let (d, t) = compare("gelu", role, &Binary32, &[], &inputs);
        eprintln!("gelu {role:?} band and Mills table: decided {d}/{t}");
        assert!(
            d as f64 >= 0.995 * t as f64,
            "gelu {role:?}: {d}/{t} decided"
        );
    }
}

/// The committed 16-bit golden tables (every pattern, checked once against the independent
/// mpmath script of tests/crosscheck): wherever the fast path decides, its bits must be the
/// table's, for every function with a fast path under the tables' exact constants (SELU's
/// published constants are not binary64 numbers, so it has none there).
#[test]
fn fast_path_matches_golden_16_bit_tables() {
    use std::io::Read;
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/golden");
    for name in [
        "sigmoid",
        "tanh",
        "silu",
        "elu",
        "gelu",
        "softplus",
        "log-sigmoid",
        "mish",
        "celu",
        "gelu-tanh",
    ] {
        for format in [&Binary16 as &'static dyn Format, &Bfloat16] {
            for (role, label) in [(Role::Forward, "forward"), (Role::Derivative, "derivative")] {
                let file = dir.join(format!("{}-{name}-{label}.u16.gz", format.name()));
                let mut bytes = Vec::new();
                flate2::read::GzDecoder::new(std::fs::File::open(&file).expect("golden table"))
                    .read_to_end(&mut bytes)
                    .unwrap();
                assert_eq!(bytes.len(), 131072, "{file:?}");
                let e = evaluator(name, role, format, &[]);
                let fast = FastEvaluator::new(&e).expect("fast path");
                let mut decided = 0;
                for x in 0u32..65536 {
                    if let Some(r) = fast.try_reference(x) {
                        let want =
                            u16::from_le_bytes([bytes[2 * x as usize], bytes[2 * x as usize + 1]]);
                        assert_eq!(r.bits as u16, want, "{file:?} at {x:#06x}");
                        decided += 1;
                    }
                }
                assert!(decided > 60000, "{file:?}: only {decided} decided");
            }
        }
    }
}

/// Tiny and moderate inputs of the exp/log functions, every binade from the subnormals to 2^9
/// of both signs (60 random patterns each, 200 from 2^−40 up), and binary32's overflow edge
/// (SELU's λx overflows just below the largest finite input), against the engine.
#[test]
fn exp_log_every_binade() {
    let mut g = Mix(83);
    let mut inputs = per_binade(&mut g, -126, 86, 60);
    inputs.extend(per_binade(&mut g, -40, 50, 200));
    inputs.extend((0..4000).map(|_| (g.next() % 0x7f_ffff) as u32 + 1)); // subnormals
    inputs.extend((0..4000).map(|_| 0x8000_0000 | ((g.next() % 0x7f_ffff) as u32 + 1)));
    // Softplus' and log-sigmoid's band edge (|x| = 2^−4), binary32's patterns around it.
    for v in [0.0625, -0.0625] {
        inputs.extend(neighbours(&Binary32, v, 300));
    }
    // Overflow edges: compared where decided (an overflowing λx is left to the engine).
    let mut edges = neighbours(&Binary32, f32::MAX as f64 / 1.0507009873554805, 500);
    edges.extend(neighbours(&Binary32, f32::MAX as f64, 500));
    edges.extend(neighbours(&Binary32, -(f32::MAX as f64), 500));
    for (name, params) in [
        ("softplus", &[][..]),
        ("log-sigmoid", &[]),
        ("mish", &[]),
        ("selu", &[]),
        ("celu", &[]),
        ("celu", &["alpha=0.375"][..]),
        ("gelu-tanh", &[]),
    ] {
        for role in [Role::Forward, Role::Derivative] {
            let (d, t) = compare(name, role, &Binary32, params, &inputs);
            let (de, te) = compare(name, role, &Binary32, params, &edges);
            eprintln!(
                "{name} {params:?} {role:?} every binade: decided {d}/{t}, overflow edges {de}/{te}"
            );
            assert!(
                d as f64 >= 0.995 * t as f64,
                "{name} {role:?}: {d}/{t} decided"
            );
        }
    }
}

/// Constants rounded to the kernel's own 16-bit format (`--param-rounding format`): GELU-tanh's
/// c and k and SELU's λ and α become short binary numbers, every pattern against the engine.
#[test]
fn format_rounded_constants_16_bit() {
    for name in ["gelu-tanh", "selu"] {
        for format in [&Binary16 as &'static dyn Format, &Bfloat16] {
            for role in [Role::Forward, Role::Derivative] {
                let f = lookup(name).unwrap();
                let constants = Constants::resolve(f, &[], ParamRounding::Format, format);
                let e = Evaluator::new(f, role, constants, format);
                let fast = FastEvaluator::new(&e).expect("fast path");
                let mut decided = 0;
                for x in 0u32..65536 {
                    if let Some(r) = fast.try_reference(x) {
                        let m = e.reference(x).unwrap();
                        assert!(
                            r.bits == m.bits
                                && r.exact.map(|v| (v.binade, v.approx.to_bits()))
                                    == m.exact.map(|v| (v.binade, v.approx.to_bits())),
                            "{name} {role:?} {} at {x:#06x}: fast {r:?} vs mpfr {m:?}",
                            format.name()
                        );
                        decided += 1;
                    }
                }
                eprintln!(
                    "{name} {role:?} {} format-rounded: decided {decided}/65536",
                    format.name()
                );
                assert!(decided > 60000);
            }
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Every catalog function and role, generically: whatever has a fast path is compared with the
// engine bit for bit (bits, clamped binade, RN_binary64 approximation; and precision 0 wherever
// the engine decided an exact rational, as the run detection of `check` compares it).

/// Functions decided exactly (src/reference/fast/piecewise.rs and softsign.rs).
const EXACT: [&str; 7] = [
    "step",
    "relu",
    "leaky-relu",
    "relu6",
    "hard-sigmoid",
    "hard-swish",
    "softsign",
];

/// Functions with a double-word fast path (src/reference/fast/: one file per family).
const DOUBLE_WORD: [&str; 12] = [
    "sigmoid",
    "tanh",
    "swish",
    "silu",
    "elu",
    "gelu",
    "softplus",
    "log-sigmoid",
    "mish",
    "selu",
    "celu",
    "gelu-tanh",
];

/// Parameter sets per function: the defaults and, for leaky ReLU, negative, zero, integer,
/// decimal (n/d), long binary64 and overflowing slopes.
fn parameter_sets(name: &str) -> Vec<Vec<&'static str>> {
    match name {
        "leaky-relu" => vec![
            vec![],
            vec!["alpha=0.25"],
            vec!["alpha=-1.5"],
            vec!["alpha=0"],
            vec!["alpha=3"],
            vec!["alpha=0.1"],
            vec!["alpha=0.3333"],
            vec!["alpha=1.70000000000000017763568394002504646778106689453125"],
            vec!["alpha=1267650600228229401496703205376"],
        ],
        "elu" | "celu" => vec![vec![], vec!["alpha=0.25"]],
        "swish" => vec![vec![], vec!["beta=1.5"]],
        _ => vec![vec![]],
    }
}

/// Same reference on both paths (see the section comment); the engine is the oracle here.
fn identical(fast: &Reference, mpfr: &Reference) -> bool {
    let exact_part = match (fast.exact, mpfr.exact) {
        (Some(a), Some(b)) => a.binade == b.binade && a.approx.to_bits() == b.approx.to_bits(),
        (None, None) => true,
        _ => false,
    };
    fast.bits == mpfr.bits && exact_part && (mpfr.precision != 0 || fast.precision == 0)
}

/// Compares wherever the fast path decides; (decided, total); panics on the first difference.
fn agree(
    name: &str,
    role: Role,
    format: &'static dyn Format,
    params: &[&str],
    inputs: &[u32],
) -> Option<(usize, usize)> {
    let e = evaluator(name, role, format, params);
    let fast = FastEvaluator::new(&e)?;
    let decided = inputs
        .par_iter()
        .map(|&x| {
            let Some(r) = fast.try_reference(x) else {
                return 0;
            };
            let m = e.reference(x).unwrap();
            assert!(
                identical(&r, &m),
                "{name} {role:?} {} {params:?} at {:#x} ({:e}): fast {r:?} vs mpfr {m:?}",
                format.name(),
                x,
                format.to_f64(x)
            );
            1
        })
        .sum();
    Some((decided, inputs.len()))
}

/// Inputs of `format` that hit kinks, ties, subnormal outputs, overflow and the closed forms'
/// cuts: ±`k` patterns around each special value, short significands (odd j and 3j times a
/// power of two, where (x + 3)/6, x(x + 3)/6, (2x + 3)/6 and α·x land on midpoints), then
/// random patterns across the whole line, [1, 2), tiny and huge magnitudes.
fn catalog_inputs(
    name: &str,
    params: &[&str],
    format: &'static dyn Format,
    n: usize,
    seed: u64,
) -> Vec<u32> {
    let f = lookup(name).unwrap();
    let assignments: Vec<String> = params.iter().map(|s| s.to_string()).collect();
    let user = Constants::parse_params(f, &assignments).unwrap();
    let c = Constants::resolve(f, &user, ParamRounding::Exact, format);
    let mut special: Vec<f64> = vec![0.0, 1.0, 1.5, 3.0, 6.0, 0.5, 2.0, 4.0];
    special.extend(f.kinks(&c).iter().map(|k| k.at as f64));
    for k in [
        -149, -126, -60, -56, -55, -30, -29, -28, -27, -24, 24, 53, 60, 100, 127,
    ] {
        special.push(2f64.powi(k));
    }
    special.push(format.to_f64(format.max_finite(false)));
    let mut v = Vec::with_capacity(n);
    for &s in &special {
        for signed in [s, -s] {
            v.extend(neighbours(format, signed, 40));
        }
    }
    let mut short = Vec::new();
    for e in -40..40 {
        for j in (1u32..64).step_by(2) {
            for m in [j as f64, 3.0 * j as f64] {
                let x = m * 2f64.powi(e);
                for x in [x, -x, 3.0 - x, x - 3.0, 1.5 - x] {
                    if let Some(bits) = format.from_f64_exact(x) {
                        short.push(bits);
                    }
                }
            }
        }
    }
    let mut g = Mix(seed);
    while short.len() > n / 4 {
        let i = (g.next() % short.len() as u64) as usize;
        short.swap_remove(i);
    }
    v.extend(short);
    let width = format.width();
    let sign_bit = 1u32 << (width - 1);
    let pick = |g: &mut Mix, lo: f64, hi: f64| {
        let a = format.ordinal(neighbours(format, lo, 0)[0]);
        let b = format.ordinal(neighbours(format, hi, 0)[0]);
        let o = a + (g.next() % (b - a + 1) as u64) as i64;
        format.from_ordinal(o) | if g.next() % 2 == 0 { 0 } else { sign_bit }
    };
    let max = format.to_f64(format.max_finite(false));
    let tiny = format.to_f64(1);
    while v.len() < n {
        let bits = match g.next() % 6 {
            0 => (g.next() as u32) & ((sign_bit << 1).wrapping_sub(1)),
            1 => pick(&mut g, 1.0, 2.0) & !sign_bit,
            2 => pick(&mut g, tiny, 1e-3),
            3 => pick(&mut g, 1e-3, 8.0),
            4 => pick(&mut g, 8.0, max),
            _ => pick(&mut g, 1.0, 7.0),
        };
        v.push(bits);
    }
    v
}

/// The generic comparison: `n` binary32 points and `n16` points of each 16-bit format (all
/// 65536 patterns when `n16` ≥ 65536) per function, parameter set and role.  Returns the
/// functions (with roles) that have no fast path.
fn catalog_agreement(n: usize, n16: usize, only: Option<&str>) -> Vec<String> {
    let mut missing = Vec::new();
    for f in ulpgauge::activation::catalog() {
        let name = f.name();
        if only.is_some_and(|o| o != name) {
            continue;
        }
        for params in parameter_sets(name) {
            for role in [Role::Forward, Role::Derivative] {
                for format in [&Binary32 as &'static dyn Format, &Binary16, &Bfloat16] {
                    let count = if format.width() == 32 { n } else { n16 };
                    let inputs: Vec<u32> = if count >= 65536 && format.width() == 16 {
                        (0..65536).collect()
                    } else {
                        catalog_inputs(name, &params, format, count, 11 + role as u64)
                    };
                    let start = std::time::Instant::now();
                    match agree(name, role, format, &params, &inputs) {
                        None => {
                            missing.push(format!("{name} {params:?} {role:?} {}", format.name()));
                        }
                        Some((d, t)) => {
                            eprintln!(
                                "{name} {params:?} {role:?} {}: decided {d}/{t} in {:.1?}",
                                format.name(),
                                start.elapsed()
                            );
                            // Exact functions decline only ±0, NaN and ±∞ (and products
                            // beyond 2^400 for leaky ReLU's huge slope).
                            if EXACT.contains(&name) {
                                let special = inputs
                                    .iter()
                                    .filter(|&&x| {
                                        !matches!(
                                            format.classify(x),
                                            ulpgauge::format::Class::Normal
                                                | ulpgauge::format::Class::Subnormal
                                        )
                                    })
                                    .count();
                                assert!(
                                    d + special >= t * 99 / 100,
                                    "{name} {params:?} {role:?}: {d}/{t} decided"
                                );
                            }
                        }
                    }
                }
            }
        }
    }
    missing
}

/// Default run: a few 10^4 points per function, parameter set, role and format.
#[test]
fn catalog_fast_matches_mpfr() {
    let missing = catalog_agreement(30_000, 6_000, None);
    for name in EXACT.iter().chain(DOUBLE_WORD.iter()) {
        assert!(
            !missing.iter().any(|m| m.starts_with(&format!("{name} "))),
            "{name} lost its fast path: {missing:?}"
        );
    }
}

/// The exact functions over every pattern of both 16-bit formats.
#[test]
fn exact_functions_exhaustive16() {
    for name in EXACT {
        let missing = catalog_agreement(0, 65536, Some(name));
        assert!(
            missing.iter().all(|m| m.contains("binary32")),
            "{missing:?}"
        );
    }
}

/// Every catalog function has a fast path in every role and format (default parameters).
#[test]
fn every_catalog_function_has_a_fast_path() {
    for f in ulpgauge::activation::catalog() {
        for role in [Role::Forward, Role::Derivative] {
            for format in [&Binary32 as &'static dyn Format, &Binary16, &Bfloat16] {
                let e = evaluator(f.name(), role, format, &[]);
                assert!(
                    FastEvaluator::new(&e).is_some(),
                    "{} {role:?} {} has no fast path",
                    f.name(),
                    format.name()
                );
            }
        }
    }
}

/// The long comparison: FAST_POINTS (default 10^6) binary32 points per function, parameter set
/// and role, and every 16-bit pattern; FAST_ONLY=name restricts it to one function.
#[test]
#[ignore]
fn catalog_large_comparison() {
    let n: usize = std::env::var("FAST_POINTS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(1_000_000);
    let only = std::env::var("FAST_ONLY").ok();
    let missing = catalog_agreement(n, 65536, only.as_deref());
    eprintln!("no fast path: {missing:?}");
}

/// Every function and parameter set with a fast path, and the formats it runs in.
fn fast_catalog() -> Vec<(&'static str, Vec<&'static str>)> {
    let mut all = Vec::new();
    for name in EXACT.iter().chain(DOUBLE_WORD.iter()) {
        for params in parameter_sets(name) {
            all.push((*name, params));
        }
    }
    // SELU's exact kind (`Kind::Selu`) with λ and α rounded to binary32 and to the format's
    // own (binary16, bfloat16: another λα), GELU-tanh with binary64 c and k, CELU with α > 1.
    all.push(("selu", vec![F32_ROUNDED]));
    all.push(("selu", vec![FORMAT_ROUNDED]));
    all.push(("gelu-tanh", vec![F32_ROUNDED]));
    all.push(("celu", vec!["alpha=3"]));
    all
}

/// `FastEvaluator::constant_span` (src/reference/fast/regions.rs) claims that every input
/// between two consecutive-pattern ends has one reference; `check` then skips the inputs in
/// between.  Checks the claim for the spans starting at `start` in one sign: the longest claimed
/// span (the claims must be monotone: regions are intervals), every input near its far end, a
/// sample inside, and that one more pattern is not claimed alike.
fn claimed_span_holds(fast: &FastEvaluator, start: u32, end_limit: u32, g: &mut Mix) -> bool {
    let Some(r) = fast.constant_span(start, start) else {
        return false;
    };
    // Largest end with a claim (binary search; claims shrink monotonically by construction).
    let (mut lo, mut hi) = (start, end_limit);
    while lo < hi {
        let mid = lo + (hi - lo).div_ceil(2);
        if fast.constant_span(start, mid).is_some() {
            lo = mid;
        } else {
            hi = mid - 1;
        }
    }
    let end = lo;
    let claimed = fast.constant_span(start, end).expect("claimed");
    assert!(
        identical(&claimed, &r),
        "span {start:#x}..={end:#x}: ends differ"
    );
    let mut probes: Vec<u32> = (end.saturating_sub(64).max(start)..=end).collect();
    probes.extend((start..=(start + 64).min(end)).collect::<Vec<_>>());
    for _ in 0..256 {
        probes.push(start + (g.next() % ((end - start) as u64 + 1)) as u32);
    }
    for p in probes {
        let got = fast.try_reference(p);
        assert!(
            got.is_some_and(|g| identical(&g, &r)),
            "span {start:#x}..={end:#x} claims one reference, but {p:#x} has {got:?}, not {r:?}"
        );
    }
    true
}

/// Every edge of a constant-reference region among the binary32 patterns of one sign, from a
/// grid of every 2^14th pattern: wherever two neighbouring grid points are not claimed as one
/// span but one of them lies in a region, the span is grown from the region's end inside the
/// grid step (found by bisection) and checked there ([`claimed_span_holds`]).  Regions narrower
/// than the grid step can be missed.  Returns the number of edges checked.
fn region_edges_hold(fast: &FastEvaluator, sign: u32, g: &mut Mix) -> usize {
    const STEP: u32 = 1 << 14;
    const LAST: u32 = 0x7f7f_ffff;
    let in_region = |m: u32| fast.constant_span(sign | m, sign | m).is_some();
    let mut edges = 0;
    let mut prev = 1;
    while prev < LAST {
        let cur = (prev + STEP).min(LAST);
        if fast.constant_span(sign | prev, sign | cur).is_none() {
            if in_region(prev) {
                claimed_span_holds(fast, sign | prev, sign | cur, g);
                edges += 1;
            }
            if in_region(cur) {
                // The first pattern of cur's span: claims from p to cur hold from it on.
                let (mut lo, mut hi) = (prev + 1, cur);
                while lo < hi {
                    let mid = lo + (hi - lo) / 2;
                    if fast.constant_span(sign | mid, sign | cur).is_some() {
                        hi = mid;
                    } else {
                        lo = mid + 1;
                    }
                }
                claimed_span_holds(fast, sign | lo, sign | cur, g);
                edges += 1;
            }
        }
        prev = cur;
    }
    edges
}

/// The constant-reference regions against the per-point fast path: every pattern of both
/// 16-bit formats, each claimed span checked input by input (and any claim joining two spans),
/// and in binary32 2000 random starts per function, role and parameter set, each span grown to
/// its largest claim and checked at its ends and inside, and every region edge found on a grid
/// ([`region_edges_hold`]).
#[test]
fn constant_regions() {
    let formats: [&'static dyn Format; 2] = [&Binary16, &Bfloat16];
    fast_catalog().par_iter().for_each(|(name, params)| {
        for role in [Role::Forward, Role::Derivative] {
            for &format in &formats {
                let e = evaluator(name, role, format, params);
                let Some(fast) = FastEvaluator::new(&e) else {
                    continue;
                };
                let sign = format.layout().sign_bit();
                for s in [0, sign] {
                    let patterns: Vec<u32> = (1..sign)
                        .map(|m| s | m)
                        .filter(|&p| format.to_f64(p).is_finite())
                        .collect();
                    let refs: Vec<Option<Reference>> =
                        patterns.iter().map(|&p| fast.try_reference(p)).collect();
                    let mut spans = Vec::new();
                    let mut i = 0;
                    while i < patterns.len() {
                        let mut j = i;
                        while j + 1 < patterns.len()
                            && fast.constant_span(patterns[i], patterns[j + 1]).is_some()
                        {
                            j += 1;
                        }
                        if let Some(r) = fast.constant_span(patterns[i], patterns[j]) {
                            for k in i..=j {
                                assert!(
                                    refs[k].is_some_and(|g| identical(&g, &r)),
                                    "{name} {params:?} {role:?} {}: span {:#x}..={:#x}, {:#x} differs",
                                    format.name(),
                                    patterns[i],
                                    patterns[j],
                                    patterns[k]
                                );
                            }
                            spans.push((i, j));
                        }
                        i = j + 1;
                    }
                    for (a, &(si, _)) in spans.iter().enumerate() {
                        for &(_, ej) in &spans[a + 1..] {
                            if let Some(r) = fast.constant_span(patterns[si], patterns[ej]) {
                                assert!(
                                    refs[si..=ej].iter().all(|g| g.is_some_and(|g| identical(&g, &r))),
                                    "{name} {params:?} {role:?} {}: a claim joins two spans",
                                    format.name()
                                );
                            }
                        }
                    }
                }
            }
            let e = evaluator(name, role, &Binary32, params);
            let Some(fast) = FastEvaluator::new(&e) else {
                continue;
            };
            let mut g = Mix(0x5eed ^ name.len() as u64 ^ (role == Role::Forward) as u64);
            let mut claims = 0;
            for _ in 0..2000 {
                let s = (g.next() as u32) & 0x8000_0000;
                let m = 1 + (g.next() % 0x7f7f_ffff) as u32;
                let limit = (m as u64 + (1 << (g.next() % 25))).min(0x7f7f_ffff) as u32;
                if claimed_span_holds(&fast, s | m, s | limit, &mut g) {
                    claims += 1;
                }
            }
            let edges = region_edges_hold(&fast, 0, &mut g)
                + region_edges_hold(&fast, 0x8000_0000, &mut g);
            eprintln!(
                "{name} {params:?} {role:?}: binary32 spans claimed from {claims} of 2000 \
                 starts, {edges} region edges checked"
            );
        }
    });
}

/// Every field of two references equal, the recorded precision included.
fn equal_references(a: &Reference, b: &Reference) -> bool {
    a.bits == b.bits
        && a.precision == b.precision
        && a.exact.map(|e| (e.approx.to_bits(), e.binade))
            == b.exact.map(|e| (e.approx.to_bits(), e.binade))
}

/// Checks one claimed scaled span of binary32 patterns `start..=end`: its ends, the 64
/// patterns beside each end and 256 inside against the per-point fast path.
fn scaled_span_holds(fast: &FastEvaluator, start: u32, end: u32, g: &mut Mix) {
    let span = fast.scaled_span(start, end).expect("claimed");
    let mut probes: Vec<u32> = (end.saturating_sub(64).max(start)..=end).collect();
    probes.extend(start..=(start + 64).min(end));
    for _ in 0..256 {
        probes.push(start + (g.next() % ((end - start) as u64 + 1)) as u32);
    }
    for p in probes {
        let got = fast.try_reference(p);
        assert!(
            got.is_some_and(|r| equal_references(&r, &span.reference(p))),
            "scaled span {start:#x}..={end:#x}: {p:#x} has {got:?}, the span says {:?}",
            span.reference(p)
        );
    }
}

/// `FastEvaluator::scaled_span` (src/reference/fast/regions.rs `scaled`) claims that the
/// references of a span are its inputs scaled by a power of two; `check` then writes them
/// from the input patterns.  Checked against the per-point fast path: in both 16-bit formats,
/// from every start of every exponent field, the claims to the field's last pattern, to the
/// next pattern and to a random one, input by input; in binary32, from three starts of every
/// exponent field of both signs, the longest claim found by bisection, at its ends and inside.
/// Each function must claim somewhere where its regions say it should (the exp-based
/// functions' and the rectifiers' forward roles), so that the path is exercised.
#[test]
fn scaled_regions() {
    let formats: [&'static dyn Format; 2] = [&Binary16, &Bfloat16];
    fast_catalog().par_iter().for_each(|(name, params)| {
        for role in [Role::Forward, Role::Derivative] {
            let mut claims = 0u64;
            for &format in &formats {
                let e = evaluator(name, role, format, params);
                let Some(fast) = FastEvaluator::new(&e) else {
                    continue;
                };
                let l = format.layout();
                let mut g = Mix(0x5ca1ed ^ name.len() as u64);
                let fields = (0..1u32 << l.exp_bits()).flat_map(|f| [0, l.sign_bit()].map(|s| (s, f)));
                for (sign, field) in fields {
                    let first = sign | field << (l.precision() - 1);
                    let last = first | ((1 << (l.precision() - 1)) - 1);
                    if !format.to_f64(first).is_finite() {
                        continue;
                    }
                    let refs: Vec<Option<Reference>> =
                        (first..=last).map(|p| fast.try_reference(p)).collect();
                    for a in first..=last {
                        let random = a + (g.next() % ((last - a) as u64 + 1)) as u32;
                        for b in [last, (a + 1).min(last), random] {
                            let Some(span) = fast.scaled_span(a, b) else {
                                continue;
                            };
                            claims += 1;
                            for x in a..=b {
                                let want = refs[(x - first) as usize];
                                assert!(
                                    want.is_some_and(|w| equal_references(&w, &span.reference(x))),
                                    "{name} {params:?} {role:?} {}: span {a:#x}..={b:#x} says {:?} at {x:#x}, the fast path {want:?}",
                                    format.name(),
                                    span.reference(x)
                                );
                            }
                        }
                    }
                }
            }
            let e = evaluator(name, role, &Binary32, params);
            let Some(fast) = FastEvaluator::new(&e) else {
                continue;
            };
            let mut g = Mix(0xf1e1d ^ name.len() as u64 ^ (role == Role::Forward) as u64);
            let mut claims32 = 0;
            for field in 1u32..255 {
                for sign in [0, 0x8000_0000u32] {
                    let first = sign | field << 23;
                    let last = first | 0x7f_ffff;
                    let random = first + (g.next() % 0x80_0000) as u32;
                    for start in [first, first + 1, random] {
                        if fast.scaled_span(start, start).is_none() {
                            continue;
                        }
                        let (mut lo, mut hi) = (start, last);
                        while lo < hi {
                            let mid = lo + (hi - lo).div_ceil(2);
                            if fast.scaled_span(start, mid).is_some() {
                                lo = mid;
                            } else {
                                hi = mid - 1;
                            }
                        }
                        scaled_span_holds(&fast, start, lo, &mut g);
                        claims32 += 1;
                    }
                }
            }
            let expected = role == Role::Forward && SCALED.contains(name);
            assert_eq!(
                claims > 0 && claims32 > 0,
                expected,
                "{name} {params:?} {role:?}: {claims} 16-bit and {claims32} binary32 claims"
            );
        }
    });
}

/// The functions whose forward role has scaled regions (src/reference/fast/regions.rs
/// `scaled`).
const SCALED: [&str; 14] = [
    "swish",
    "silu",
    "tanh",
    "gelu",
    "gelu-tanh",
    "mish",
    "softplus",
    "log-sigmoid",
    "elu",
    "celu",
    "relu",
    "leaky-relu",
    "relu6",
    "hard-swish",
];

/// The double-word region of forward swish (2^−6 ≤ |z| < 64), where a ~63-bit first stage
/// decides most inputs: 10^6 random binary32 inputs of either sign (β = 1, and β = 1.5 on a
/// quarter as many), every decided reference equal to the engine's, and at least 99% decided
/// (the first stage declines about 2^−8 of them, the double-word path then decides).
#[test]
fn swish_double_word_region_matches_mpfr() {
    let mut mix = Mix(0x005E_ED0F_5157);
    let points = |mix: &mut Mix, n: usize, top: f32| -> Vec<u32> {
        (0..n)
            .map(|i| {
                let p = mix.between(0.015625, top);
                if i % 2 == 0 {
                    p
                } else {
                    p | 0x8000_0000
                }
            })
            .collect()
    };
    for (params, n, top) in [
        (&[][..], 1_000_000, 64.0f32),
        (&["beta=1.5"][..], 250_000, 42.0),
    ] {
        let inputs = points(&mut mix, n, top);
        let (decided, total) = compare("swish", Role::Forward, &Binary32, params, &inputs);
        assert!(
            decided * 100 >= total * 99,
            "swish {params:?}: only {decided} of {total} decided"
        );
    }
}
