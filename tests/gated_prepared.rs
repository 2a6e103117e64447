//! The prepared pair reference (act(a) enclosed once per a, times the exact b) against the
//! plain MPFR pair reference: the same rounded value and the same binary64 approximation on
//! 10^5 sampled pairs per gated function, role and 16-bit format — both the whole prepared
//! path and its integer part alone (104-bit ends of act(a) times b), which must decide most
//! pairs where b matters, so the comparison covers it.

use rayon::prelude::*;
use ulpgauge::activation::{gated_catalog, Constants, GatedRole};
use ulpgauge::format::{Bfloat16, Binary16, Format};
use ulpgauge::reference::{PairEvaluator, ParamRounding};

/// splitmix64 (Steele, Lea, Flood 2014), for reproducible samples.
fn mix(i: u64) -> u64 {
    let mut z = i
        .wrapping_mul(0x9e37_79b9_7f4a_7c15)
        .wrapping_add(0x1234_5678);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

#[test]
fn prepared_and_plain_references_agree() {
    let formats: [&'static dyn Format; 2] = [&Binary16, &Bfloat16];
    for format in formats {
        for g in gated_catalog() {
            for role in GatedRole::ALL {
                let c = Constants::resolve(g.act(), &[], ParamRounding::Exact, format);
                let e = PairEvaluator::new(*g, role, c, format);
                // 400 values of a, 250 of b each: 10^5 pairs.
                let (mismatches, integer): (usize, usize) = (0..400u64)
                    .into_par_iter()
                    .map(|k| {
                        let a = (mix(k) & 0xffff) as u32;
                        let p = e.prepare(a);
                        let mut integer = 0;
                        let bad = (0..250u64)
                            .filter(|j| {
                                let b = (mix(1_000_000 + k * 1000 + j) & 0xffff) as u32;
                                let fast = e.reference_prepared(&p, b).unwrap();
                                let plain = e.reference(a, b).unwrap();
                                let mut same = fast.bits == plain.bits && fast.exact == plain.exact;
                                if let Some(r) = e.reference_integer(&p, b) {
                                    integer += 1;
                                    same &= r.bits == plain.bits && r.exact == plain.exact;
                                }
                                if !same {
                                    eprintln!(
                                        "{} {} {}: a={a:#x} b={b:#x}: {fast:?} vs {plain:?}",
                                        g.name(),
                                        role.name(),
                                        format.name()
                                    );
                                }
                                !same
                            })
                            .count();
                        (bad, integer)
                    })
                    .reduce(|| (0, 0), |x, y| (x.0 + y.0, x.1 + y.1));
                assert_eq!(
                    mismatches,
                    0,
                    "{} {} {}",
                    g.name(),
                    role.name(),
                    format.name()
                );
                // Where b matters, about half of the a have act(a) ≠ 0 at worst (reglu), and
                // 104 bits decide all but ~2^−40 of those pairs that are finite.
                if role != GatedRole::DerivativeB {
                    assert!(
                        integer * 3 > 100_000,
                        "{} {} {}: integer path decided only {integer} pairs",
                        g.name(),
                        role.name(),
                        format.name()
                    );
                }
            }
        }
    }
}
