//! Accumulators fed in pieces and merged give what one accumulator fed every point gives: the
//! ground for streaming a sweep in chunks (and for joining shards).

use super::*;
use crate::activation::{lookup, Constants, Role};
use crate::format::{Binary16, Format};
use crate::reference::{Evaluator, ParamRounding};
use crate::sweep::Rng;

/// Every binary16 input of ELU with a kernel that errs by a few steps, returns NaN over a few
/// stretches (runs that cross the seams below), +inf near overflow and crashes now and then.
fn points() -> Vec<Point> {
    let f: &'static dyn Format = &Binary16;
    let elu = lookup("elu").unwrap();
    let constants = Constants::resolve(elu, &[], ParamRounding::Exact, f);
    let ev = Evaluator::new(elu, Role::Forward, constants, f);
    let mut rng = Rng::new(11);
    (0..0x1_0000u32)
        .filter_map(|x| {
            let reference = ev.reference(x).ok()?;
            let r = rng.next_u64();
            let nan_stretch = (0x3000..0x3400).contains(&x) || (0xb100..0xb180).contains(&x);
            let out = match r % 61 {
                _ if nan_stretch => Some(0x7e00),
                0 => None,
                1 => Some(0x7c00),
                _ if f.classify(reference.bits) == crate::format::Class::Nan => Some(0x7e00),
                k => {
                    let o = f.ordinal(reference.bits) + (k % 7) as i64 - 3
                        + if r % 211 == 5 { 400 } else { 0 };
                    Some(f.from_ordinal(o.clamp(-0x7c00, 0x7c00)))
                }
            };
            Some(Point {
                input: x,
                second: None,
                output: out,
                reference,
                left: None,
            })
        })
        .collect()
}

/// The points a sink is given over the listing limit, as text.
#[derive(Default)]
struct Points(Vec<String>);
impl FindingSink for Points {
    fn run(&mut self, _: &NonFiniteRun) {}
    fn point(&mut self, p: &Worst) {
        self.0.push(format!("{p:?}"));
    }
}

/// A run summary's figures as text: totals, cells, listed runs.
fn runs(summary: RunSummary) -> String {
    let f = &Binary16;
    json(&(summary.totals(), summary.cells(f), summary.listed(f)))
}

fn json<T: serde::Serialize>(v: &T) -> String {
    serde_json::to_string(v).unwrap()
}

#[test]
fn pieces_merged_equal_the_whole() {
    let f: &'static dyn Format = &Binary16;
    let points = points();
    let whole = |span| {
        let (mut a, mut s, mut n) = (
            AccuracyAcc::new(f, Some(1e-3), Some(3.0), span),
            ShapeAcc::new(f, false),
            NonFiniteStream::new(f, 5),
        );
        for p in &points {
            a.add(p);
            s.add(p);
            n.add(p);
        }
        let mut listed = Points::default();
        (
            a.finish(&mut listed),
            s.finish(),
            runs(n.finish(&mut NoSink)),
            listed.0,
        )
    };
    for span in [
        None,
        Some((-0x7bff, 0x7bff)),
        Some((-0x7bff * 64, 0x7bff * 64)),
    ] {
        let (wa, ws, wn, wl) = whole(span);
        assert!(wn.contains("\"runs\":") && ws.jump_count > 20 && wa.points > 50_000);
        assert!(!wl.is_empty());
        let len = points.len();
        // Seams inside the NaN stretches, at the sign change and at arbitrary places.
        for cuts in [
            vec![0x3100, 0x3300],
            vec![0x7c00, 0x8000, 0xb140],
            vec![1, len / 3, 2 * len / 3, len - 1],
        ] {
            let mut bounds = vec![0];
            bounds.extend(cuts.iter().map(|&c| c.min(len)));
            bounds.push(len);
            let mut parts = bounds.windows(2).map(|w| {
                let (mut a, mut s, mut n) = (
                    AccuracyAcc::new(f, Some(1e-3), Some(3.0), span),
                    ShapeAcc::new(f, false),
                    NonFiniteStream::new(f, 5),
                );
                for p in &points[w[0]..w[1]] {
                    a.add(p);
                    s.add(p);
                    n.add(p);
                }
                (a, s, n)
            });
            let (mut a, mut s, mut n) = parts.next().unwrap();
            for (pa, ps, pn) in parts {
                a.merge(pa);
                s.merge(ps);
                n.merge(pn);
            }
            let mut listed = Points::default();
            let (ma, ms, mn) = (
                a.finish(&mut listed),
                s.finish(),
                runs(n.finish(&mut NoSink)),
            );
            assert_eq!(json(&ma), json(&wa), "{cuts:?}");
            assert_eq!(format!("{:?}", ma.buckets), format!("{:?}", wa.buckets));
            assert_eq!(listed.0, wl);
            assert_eq!(json(&ms), json(&ws), "{cuts:?}");
            assert_eq!(mn, wn, "{cuts:?}");
        }
    }
}

#[test]
fn ties_across_a_seam_keep_the_lowest_input() {
    let f: &'static dyn Format = &Binary16;
    // y = x exactly and ŷ = nextUp(x): one ulp at every input of [1, 2) (binary16 ulp 2^-10).
    let point = |x: u32| Point {
        input: x,
        second: None,
        output: Some(x + 1),
        reference: crate::reference::Reference {
            bits: x,
            exact: Some(crate::format::ExactValue {
                approx: f.to_f64(x),
                binade: 0,
            }),
            precision: 0,
        },
        left: None,
    };
    let mut low = AccuracyAcc::new(f, None, None, None);
    low.add(&point(0x3c10));
    let mut high = AccuracyAcc::new(f, None, None, None);
    high.add(&point(0x3c20));
    low.merge(high);
    let a = low.finish(&mut NoSink);
    assert_eq!(a.max_ulp, 1.0);
    assert_eq!(a.worst.unwrap().input.bits, "0x3c10");
    assert_eq!(a.per_binade[0].worst_input.bits, "0x3c10");
}
