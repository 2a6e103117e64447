use super::*;
use crate::activation::{lookup_gated, Constants, GatedRole};
use crate::check::kernel::InProcessKernel;
use crate::format::Binary16;
use crate::reference::ParamRounding;
use half::f16;

fn evaluator(name: &str) -> PairEvaluator {
    let g = lookup_gated(name).expect("gated");
    let c = Constants::resolve(g.act(), &[], ParamRounding::Exact, &Binary16);
    PairEvaluator::new(g, GatedRole::Forward, c, &Binary16)
}

fn h(bits: u32) -> f32 {
    f16::from_bits(bits as u16).to_f32()
}

#[test]
fn a_correctly_rounded_reglu_matches_everywhere() {
    // relu(a)·b of two binary16 values is exact in binary32 (11 + 11 significant bits ≤ 24),
    // so the `half` crate's from_f32 rounds it once: a correctly rounded kernel.
    let mut kernel = InProcessKernel::new(|a, b: Option<u32>| {
        let y = h(a).max(0.0) * h(b?);
        Some(f16::from_f32(y).to_bits() as u32)
    });
    let a: Vec<u32> = (0x3c00..0x3c40).chain(0xbc00..0xbc08).collect();
    let sweep = PairSweep::Exhaustive { a };
    let out = run_pairs(&mut kernel, &evaluator("reglu"), &sweep, |_| {});
    assert_eq!(out.acc.pairs, 72 * 65536);
    assert!(out.reference_error.is_none());
    // relu(−x)·b is ±0 in IEEE arithmetic and in the reference alike; NaN·anything is NaN;
    // relu(a)·∞ is ∞ for a > 0 (IEEE 754-2019 §7.2: only 0·∞ is invalid).
    // `exact` counts compared pairs only: the matching ±∞ and NaN outputs are not compared —
    // b = ±∞ or NaN (2·1023 NaN and 2 infinite patterns per a in IEEE 754 binary16) and the
    // products that overflow (counted with the `half` crate's rounding of the exact product).
    assert_eq!(out.acc.exact, out.acc.compared);
    let a: Vec<u32> = (0x3c00..0x3c40).chain(0xbc00..0xbc08).collect();
    let overflowing = a
        .iter()
        .flat_map(|&x| (0..=0xffffu32).map(move |y| (x, y)))
        .filter(|&(x, y)| {
            h(y).is_finite() && f16::from_f32(h(x).max(0.0) * h(y)).to_f32().is_infinite()
        })
        .count() as u64;
    assert!(overflowing > 0);
    assert_eq!(out.acc.pairs - out.acc.compared, 72 * 2048 + overflowing);
    // Correct rounding: every error at most half an ulp of y.
    assert!(out.acc.max_ulp() <= 0.5);
    assert_eq!(out.acc.within_half, out.acc.compared);
    assert_eq!(out.acc.spurious_non_finite + out.acc.missing_non_finite, 0);
}

/// SwiGLU computed as (a·b rounded to binary16)·σ(a): the first product overflows where the
/// exact value does not.
fn product_first(a: u32, b: Option<u32>) -> Option<u32> {
    let (x, y) = (h(a), h(b?));
    let ab = f16::from_f32(x * y).to_f32();
    let s = 1.0 / (1.0 + (-(x as f64)).exp());
    Some(f16::from_f64(ab as f64 * s).to_bits() as u32)
}

#[test]
fn sharded_runs_join_into_the_unsharded_one_and_name_the_overflow() {
    let e = evaluator("swiglu");
    // a = −20 (0xcd00), −8 (0xc800), 3 (0x4200), 0.5 (0x3800).
    let all = vec![0x3800, 0x4200, 0xc800, 0xcd00];
    let whole = run_pairs(
        &mut InProcessKernel::new(product_first),
        &e,
        &PairSweep::Exhaustive { a: all.clone() },
        |_| {},
    );
    let mut joined = PairAcc::new(&Binary16);
    for part in [&all[..1], &all[1..3], &all[3..]] {
        let sweep = PairSweep::Exhaustive { a: part.to_vec() };
        let out = run_pairs(&mut InProcessKernel::new(product_first), &e, &sweep, |_| {});
        joined.join(&out.acc);
    }
    assert_eq!(joined, whole.acc);
    // Spurious infinities: exactly the b with |RN16(a·b)| = ∞ while |silu(a)·b| stays below
    // 65504 — counted here with the `half` crate's own rounding and f64 σ (σ(−20)·65504 and
    // σ(−8)·65504 are far below the threshold, 3·σ(3)·b and 0.5·σ(0.5)·b keep the order of a·b).
    let mut expected = 0;
    for a in [0xc800u32, 0xcd00] {
        for b in 0..=0xffffu32 {
            let (x, y) = (h(a), h(b));
            if y.is_finite() && f16::from_f32(x * y).to_f32().is_infinite() {
                expected += 1;
            }
        }
    }
    assert!(expected > 0);
    let spurious_negative_a: u64 = [0xc800u32, 0xcd00]
        .iter()
        .map(|&a| {
            let i = cells::cell(&Binary16, a).unwrap();
            let n = whole.acc.axis();
            whole.acc.cell_spurious[i * n..(i + 1) * n]
                .iter()
                .sum::<u64>()
        })
        .sum();
    assert_eq!(spurious_negative_a, expected);
    let rs = regions(&whole.acc);
    assert_eq!(
        rs.iter().map(|r| r.pairs).sum::<u64>(),
        whole.acc.spurious_non_finite
    );
    // a = −20: a·b overflows binary16 for |b| > 65520/20 = 3276, so the row of −[2^4, 2^5)
    // holds spurious infinities in b's binades [2^11, 2^12) … [2^15, 2^16), on both signs.
    let c = |bits| cells::cell(&Binary16, bits).unwrap();
    let row = c(0xcd00);
    assert!(rs
        .iter()
        .any(|r| r.a == (row, row) && r.b == (c(0x6800), c(0x7bff))));
    assert!(rs
        .iter()
        .any(|r| r.a == (row, row) && r.b == (c(0xfbff), c(0xe800))));
}

#[test]
fn sampled_pairs_are_bounded_and_reproducible() {
    let f = &crate::format::Binary32;
    let sweep = PairSweep::Sampled {
        per_cell: 1,
        edge: true,
        random: 100,
        seed: 7,
    };
    let mut seen = Vec::new();
    for_each_chunk(f, &sweep, |a, b| {
        seen.extend(a.iter().zip(b).map(|(x, y)| (*x, *y)))
    });
    assert_eq!(seen.len() as u64, sweep.count(f));
    let mut again = Vec::new();
    for_each_chunk(f, &sweep, |a, b| {
        again.extend(a.iter().zip(b).map(|(x, y)| (*x, *y)))
    });
    assert_eq!(seen, again);
}

#[test]
fn exact_never_exceeds_compared() {
    // A non-finite reference matched by the output (NaN·b is NaN, 3·silu(3)·∞ is ∞: IEEE
    // 754-2019 §6.2 and §7.2) is neither compared nor exact; a finite one matched is both.
    let f = &Binary16;
    let e = evaluator("swiglu");
    let mut acc = PairAcc::new(f);
    let three = 0x4200;
    for b in [0x7e00, 0x7c00, 0x3c00] {
        let r = e.reference(three, b).expect("reference");
        acc.add(f, three, b, Some(r.bits), &r);
    }
    assert_eq!((acc.pairs, acc.compared, acc.exact), (3, 1, 1));
    assert_eq!(acc.missing_non_finite + acc.spurious_non_finite, 0);
}
