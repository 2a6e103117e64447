//! Number formats against IEEE 754-2019 limits and the `half` crate's conversions.

use ulpgauge::format::{
    by_name, step_distance, ulp_error, Bfloat16, Binary16, Binary32, Class, E4m3, E5m2, ExactValue,
    Format,
};
use ulpgauge::reference::{round_float, round_rational};

fn value(format: &dyn Format, bits: u32) -> f64 {
    format.to_f64(bits)
}

#[test]
fn binary16_limits_match_ieee_754_2019() {
    // IEEE 754-2019 Table 3.5, binary16: emax = 15, p = 11; max = 65504,
    // smallest normal 2^-14, smallest subnormal 2^-24.
    let f = &Binary16;
    assert_eq!((f.precision(), f.emin(), f.emax()), (11, -14, 15));
    assert_eq!(value(f, f.max_finite(false)), 65504.0);
    assert_eq!(value(f, 0x0400), 2f64.powi(-14));
    assert_eq!(value(f, 0x0001), 2f64.powi(-24));
    assert_eq!(f.classify(0x7c00), Class::Infinite);
    assert_eq!(f.classify(0x7e00), Class::Nan);
    assert_eq!(f.classify(0x03ff), Class::Subnormal);
}

#[test]
fn binary32_limits_match_ieee_754_2019() {
    // IEEE 754-2019 Table 3.5, binary32: emax = 127, p = 24.
    let f = &Binary32;
    assert_eq!((f.precision(), f.emin(), f.emax()), (24, -126, 127));
    assert_eq!(value(f, f.max_finite(false)), f32::MAX as f64);
    assert_eq!(value(f, 1), 2f64.powi(-149));
    assert_eq!(value(f, 0x0080_0000), f32::MIN_POSITIVE as f64);
}

#[test]
fn bfloat16_limits() {
    // bfloat16 is the top half of binary32 (8 exponent bits, p = 8): max (2 − 2^-7)·2^127,
    // smallest subnormal 2^-133 (common practice; the `half` crate documents the same layout).
    let f = &Bfloat16;
    assert_eq!((f.precision(), f.emin(), f.emax()), (8, -126, 127));
    assert_eq!(
        value(f, f.max_finite(false)),
        (2.0 - 2f64.powi(-7)) * 2f64.powi(127)
    );
    assert_eq!(value(f, 1), 2f64.powi(-133));
}

#[test]
fn sixteen_bit_decoding_agrees_with_the_half_crate() {
    for bits in 0u32..65536 {
        let ours = Binary16.to_f64(bits);
        let theirs = half::f16::from_bits(bits as u16).to_f64();
        assert!(
            ours == theirs || (ours.is_nan() && theirs.is_nan()),
            "f16 {bits:#06x}"
        );
        assert_eq!(
            ours.is_sign_negative(),
            theirs.is_sign_negative(),
            "f16 sign {bits:#06x}"
        );
        let ours = Bfloat16.to_f64(bits);
        let theirs = half::bf16::from_bits(bits as u16).to_f64();
        assert!(
            ours == theirs || (ours.is_nan() && theirs.is_nan()),
            "bf16 {bits:#06x}"
        );
    }
}

#[test]
fn binary32_decoding_agrees_with_the_hardware_conversion() {
    // IEEE 754-2019 §5.4.2 (common practice): widening binary32 to binary64 is exact, so
    // `f32 as f64` is an independent decoder. Every 4099th pattern, plus the ends of every
    // exponent field with each sign (zeros, subnormals, infinities and NaNs included).
    let mut patterns: Vec<u32> = (0..=u32::MAX).step_by(4099).collect();
    for field in 0u32..256 {
        for sign in [0, 0x8000_0000] {
            let base = sign | field << 23;
            patterns.extend([base, base | 1, base | 0x40_0000, base | 0x7f_ffff]);
        }
    }
    for bits in patterns {
        let ours = Binary32.to_f64(bits);
        let theirs = f32::from_bits(bits) as f64;
        assert!(
            ours.to_bits() == theirs.to_bits() || (ours.is_nan() && theirs.is_nan()),
            "f32 {bits:#010x}: {ours:e} vs {theirs:e}"
        );
    }
}

#[test]
fn normal_bits_agree_with_the_hardware_encoding() {
    // Common practice: `v as f32` is exact for an f64 that is an f32 value, so an f32 normal
    // pattern's widened value must give back that pattern; one more significant bit, a
    // subnormal or an out-of-range exponent gives None.
    let l = Binary32.layout();
    for bits in (0..=u32::MAX).step_by(7919) {
        let v = f32::from_bits(bits);
        let want = v.is_normal().then_some(bits);
        assert_eq!(l.normal_bits(v as f64), want, "{bits:#010x}");
        if v.is_normal() {
            let nudged = f64::from_bits((v as f64).to_bits() + 1);
            assert_eq!(l.normal_bits(nudged), None, "{bits:#010x} + 2^-52 ulp");
        }
    }
    assert_eq!(l.normal_bits(2f64.powi(128)), None);
    assert_eq!(l.normal_bits(2f64.powi(-127)), None);
}

#[test]
fn exact_encoding_round_trips_every_sixteen_bit_pattern() {
    for format in [&Binary16 as &dyn Format, &Bfloat16] {
        for bits in 0u32..65536 {
            if format.classify(bits) == Class::Nan {
                continue;
            }
            assert_eq!(
                format.from_f64_exact(format.to_f64(bits)),
                Some(bits),
                "{}",
                format.name()
            );
        }
    }
    assert_eq!(Binary16.from_f64_exact(1.0 + 2f64.powi(-11)), None);
    assert_eq!(Binary16.from_f64_exact(2f64.powi(-25)), None);
    assert_eq!(Binary16.from_f64_exact(65536.0), None);
}

/// A deterministic stream of binary64 values spread over every binade that matters.
fn sample_f64(n: usize) -> Vec<f64> {
    let mut state = 0x9e37_79b9_7f4a_7c15u64;
    (0..n)
        .map(|_| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let exponent = (state >> 52) as i32 % 300 - 160;
            let mantissa = 1.0 + (state & ((1 << 52) - 1)) as f64 / 2f64.powi(52);
            let sign = if state & (1 << 63) != 0 { -1.0 } else { 1.0 };
            sign * mantissa * 2f64.powi(exponent)
        })
        .collect()
}

#[test]
fn rounding_agrees_with_half_and_the_hardware() {
    // half::f16::from_f32 and bf16::from_f32 round binary32 to nearest even, subnormals
    // included; the f64 → f32 cast is IEEE 754 round-to-nearest-even on every Rust target.
    // (half 2.7's from_f64 is NOT used: it rounds through binary32, a double rounding —
    // −124.59374701703453 gives 0xd7ca there, while numpy's float16 and ulpgauge give 0xd7c9.)
    for v in sample_f64(200_000) {
        let exact = rug::Float::with_val(53, v);
        assert_eq!(
            round_float(&exact, &Binary32),
            (v as f32).to_bits(),
            "f32 {v:e}"
        );
        let single = v as f32;
        let exact_single = rug::Float::with_val(24, single);
        assert_eq!(
            round_float(&exact_single, &Binary16),
            half::f16::from_f32(single).to_bits() as u32,
            "f16 {single:e}"
        );
        assert_eq!(
            round_float(&exact_single, &Bfloat16),
            half::bf16::from_f32(single).to_bits() as u32,
            "bf16 {single:e}"
        );
        let q = rug::Rational::from_f64(v).unwrap();
        assert_eq!(
            round_rational(&q, false, &Binary32),
            (v as f32).to_bits(),
            "f32 rational {v:e}"
        );
    }
}

#[test]
fn overflow_threshold_is_max_plus_half_ulp() {
    // IEEE 754-2019 §7.4: round-to-nearest overflows from max + ulp(max)/2 on; for binary16
    // that is 65504 + 16 = 65520, which ties to even and so overflows.
    let q = |v: f64| rug::Rational::from_f64(v).unwrap();
    assert_eq!(round_rational(&q(65519.999), false, &Binary16), 0x7bff);
    assert_eq!(round_rational(&q(65520.0), false, &Binary16), 0x7c00);
    assert_eq!(round_rational(&q(-65520.0), false, &Binary16), 0xfc00);
    // Half the smallest subnormal ties to even (zero); just above it rounds up.
    assert_eq!(round_rational(&q(2f64.powi(-25)), false, &Binary16), 0x0000);
    assert_eq!(
        round_rational(&(q(2f64.powi(-25)) * q(1.0001)), false, &Binary16),
        0x0001
    );
    // A tiny negative value keeps its sign when it underflows.
    assert_eq!(
        round_rational(&q(-2f64.powi(-30)), false, &Binary16),
        0x8000
    );
}

#[test]
fn ulp_follows_the_goldberg_definition() {
    // ulp(y) = 2^(max(⌊log2|y|⌋, emin) − p + 1) (Muller, INRIA RR-5504).
    let f = &Binary32;
    let ulp = |binade| {
        ExactValue {
            approx: 0.0,
            binade,
        }
        .ulp(f)
    };
    assert_eq!(ulp(0), 2f64.powi(-23));
    assert_eq!(ulp(-1), 2f64.powi(-24));
    assert_eq!(ulp(-126), 2f64.powi(-149));
    let y = ExactValue {
        approx: 1.0 - 2f64.powi(-40),
        binade: -1,
    };
    // ŷ = 1 is 2^-40 away from y, in units of 2^-24.
    assert!((ulp_error(f, 0x3f80_0000, &y) - 2f64.powi(-16)).abs() < 1e-12);
}

#[test]
fn ordering_and_steps() {
    let f = by_name("f16").unwrap();
    assert_eq!(f.next_up(0x8000), 0x0001);
    assert_eq!(f.next_down(0x0000), 0x8001);
    assert_eq!(f.next_up(0x7bff), 0x7c00);
    assert_eq!(f.next_up(0xfc00), 0xfbff);
    assert_eq!(step_distance(f, 0x8001, 0x0001), 2);
    assert_eq!(step_distance(f, 0x8000, 0x0000), 0);
    assert_eq!(step_distance(f, 0x3c00, 0x3c05), 5);
    let mut bits = 0xfc00;
    let mut count = 0;
    while bits != 0x7c00 {
        let next = f.next_up(bits);
        assert!(
            f.to_f64(next) > f.to_f64(bits) || (f.to_f64(next) == 0.0 && f.to_f64(bits) == 0.0)
        );
        bits = next;
        count += 1;
    }
    // From −∞ to +∞ every non-NaN value once with ±0 merged: 0x7c00 steps on each side.
    assert_eq!(count, 2 * 0x7c00);
}

// OCP 8-bit floating point, from the OFP8 specification v1.0 (Open Compute Project): its table
// of E4M3 and E5M2 encodings (exponent bias 7 / 15, max normal, min normal, min subnormal,
// infinities and NaNs) and its two conversion modes for out-of-range results.

const E4M3: E4m3 = E4m3 { saturating: false };
const E5M2: E5m2 = E5m2 { saturating: false };
const E4M3_SAT: E4m3 = E4m3 { saturating: true };
const E5M2_SAT: E5m2 = E5m2 { saturating: true };

#[test]
fn e4m3_limits_match_the_ofp8_specification() {
    // OFP8 v1.0: E4M3 bias 7, 3 mantissa bits; max normal S.1111.110 = 448, min normal
    // S.0001.000 = 2^-6, max subnormal S.0000.111 = 0.875·2^-6, min subnormal 2^-9; no
    // infinities; NaN only S.1111.111.
    let f = &E4M3;
    assert_eq!(
        (f.width(), f.precision(), f.emin(), f.emax()),
        (8, 4, -6, 8)
    );
    assert_eq!(f.max_finite(false), 0x7e);
    assert_eq!(value(f, 0x7e), 448.0);
    assert_eq!(value(f, 0xfe), -448.0);
    assert_eq!(value(f, 0x08), 2f64.powi(-6));
    assert_eq!(value(f, 0x07), 0.875 * 2f64.powi(-6));
    assert_eq!(value(f, 0x01), 2f64.powi(-9));
    assert_eq!(
        f.classify(0x78),
        Class::Normal,
        "S.1111.000 is 256, not infinity"
    );
    assert_eq!(value(f, 0x78), 256.0);
    for nan in [0x7f, 0xff] {
        assert_eq!(f.classify(nan), Class::Nan);
        assert!(value(f, nan).is_nan());
    }
    let classes: Vec<Class> = (0..256).map(|b| f.classify(b)).collect();
    assert!(!classes.contains(&Class::Infinite));
    assert_eq!(classes.iter().filter(|c| **c == Class::Nan).count(), 2);
    assert_eq!(f.quiet_nan(), 0x7f);
    assert_eq!(f.from_f64_exact(f64::INFINITY), None);
    assert_eq!(f.from_f64_exact(480.0), None);
}

#[test]
fn e5m2_limits_match_the_ofp8_specification() {
    // OFP8 v1.0: E5M2 bias 15, 2 mantissa bits; max normal S.11110.11 = 57344, min normal
    // S.00001.00 = 2^-14, max subnormal S.00000.11 = 0.75·2^-14, min subnormal 2^-16;
    // infinities S.11111.00, NaNs S.11111.{01, 10, 11}.
    let f = &E5M2;
    assert_eq!(
        (f.width(), f.precision(), f.emin(), f.emax()),
        (8, 3, -14, 15)
    );
    assert_eq!(value(f, f.max_finite(false)), 57344.0);
    assert_eq!(value(f, 0x04), 2f64.powi(-14));
    assert_eq!(value(f, 0x03), 0.75 * 2f64.powi(-14));
    assert_eq!(value(f, 0x01), 2f64.powi(-16));
    assert_eq!(f.classify(0x7c), Class::Infinite);
    assert_eq!(f.classify(0xfc), Class::Infinite);
    for nan in [0x7d, 0x7e, 0x7f, 0xfd, 0xfe, 0xff] {
        assert_eq!(f.classify(nan), Class::Nan);
    }
}

#[test]
fn every_eight_bit_pattern_round_trips() {
    for format in [&E4M3 as &dyn Format, &E5M2, &E4M3_SAT, &E5M2_SAT] {
        for bits in 0u32..256 {
            if format.classify(bits) == Class::Nan {
                continue;
            }
            assert_eq!(
                format.from_f64_exact(format.to_f64(bits)),
                Some(bits),
                "{} {bits:#04x}",
                format.name()
            );
            assert_eq!(
                format.layout().normal_bits(format.to_f64(bits)).is_some(),
                format.classify(bits) == Class::Normal,
                "{} {bits:#04x}",
                format.name()
            );
        }
    }
}

#[test]
fn fp8_overflow_follows_the_conversion_mode() {
    // OFP8 v1.0 conversions: round to nearest even first; out of range then gives NaN (E4M3)
    // or ±∞ (E5M2) in the non-saturating mode, ±max in the saturating one; infinities too.
    let q = |v: f64| rug::Rational::from_f64(v).unwrap();
    // E4M3: 464 is the midpoint of 448 and 480 (not representable): ties to even, to 448.
    assert_eq!(round_rational(&q(464.0), false, &E4M3), 0x7e);
    assert_eq!(round_rational(&q(464.0625), false, &E4M3), 0x7f);
    assert_eq!(round_rational(&q(-1e6), false, &E4M3), 0xff);
    assert_eq!(round_rational(&q(464.0625), false, &E4M3_SAT), 0x7e);
    assert_eq!(round_rational(&q(-1e6), false, &E4M3_SAT), 0xfe);
    // E5M2: max + ulp(max)/2 = 61440 ties to even (infinity's side), so it overflows.
    assert_eq!(round_rational(&q(61439.0), false, &E5M2), 0x7b);
    assert_eq!(round_rational(&q(61440.0), false, &E5M2), 0x7c);
    assert_eq!(round_rational(&q(-61440.0), false, &E5M2), 0xfc);
    assert_eq!(round_rational(&q(61440.0), false, &E5M2_SAT), 0x7b);
    let inf = rug::Float::with_val(53, f64::INFINITY);
    assert_eq!(round_float(&inf, &E5M2), 0x7c);
    assert_eq!(round_float(&inf, &E5M2_SAT), 0x7b);
    assert_eq!(round_float(&-inf.clone(), &E4M3), 0xff);
    assert_eq!(round_float(&inf, &E4M3_SAT), 0x7e);
    // Subnormals round at their own precision: half the smallest (2^-10) ties to zero.
    assert_eq!(round_rational(&q(2f64.powi(-10)), false, &E4M3), 0x00);
    assert_eq!(round_rational(&q(3.0 * 2f64.powi(-10)), false, &E4M3), 0x02);
}

#[test]
fn fp8_names_and_the_overflow_option() {
    use ulpgauge::format::{resolve, Fp8Overflow};
    assert_eq!(by_name("e4m3").unwrap().name(), "e4m3");
    assert_eq!(
        resolve("e4m3", Some(Fp8Overflow::Saturate)).unwrap().name(),
        "e4m3-sat"
    );
    assert_eq!(
        resolve("e5m2", Some(Fp8Overflow::Nan)).unwrap().name(),
        "e5m2"
    );
    assert!(resolve("f32", Some(Fp8Overflow::Saturate)).is_err());
    assert!(resolve("e4m3-sat", Some(Fp8Overflow::Nan)).is_err());
    assert!(resolve("e3m4", None).unwrap_err().contains("e4m3, e5m2"));
}
