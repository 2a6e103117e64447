//! The ABI shapes compute what the C library computes: f32, 16-bit patterns, derivative,
//! gradient (from x and from y), trailing parameters, in-place, and a Rust cdylib.

mod kernel_support;

use half::{bf16, f16};
use kernel_support::*;
use ulpgauge::kernel::{KernelRole, ParamPassing};

fn bits(v: &[f32]) -> Vec<u32> {
    v.iter().map(|x| x.to_bits()).collect()
}

fn run(spec: &ulpgauge::kernel::KernelSpec, x: &[u32], g: Option<&[u32]>) -> Vec<u32> {
    let out = runner(spec).run(x, g);
    assert!(out.crashes.is_empty(), "{:?}", out.crashes);
    out.outputs.into_iter().map(Option::unwrap).collect()
}

// Rust's f32::exp / tanh / exp_m1 call the same C library (glibc) functions the C kernels use,
// so the expected values below are computed independently of the kernels' code.

#[test]
fn f32_forward_derivative_gradient_trailing() {
    let x = f32_sample(3000);
    let xs: Vec<f32> = x.iter().map(|&b| f32::from_bits(b)).collect();
    let sig = |v: f32| 1.0f32 / (1.0 + (-v).exp());
    let same = |got: Vec<u32>, want: Vec<f32>| {
        for (i, (g, w)) in got.iter().zip(&want).enumerate() {
            assert!(
                *g == w.to_bits() || (f32::from_bits(*g).is_nan() && w.is_nan()),
                "x={:e} i={i}",
                xs[i]
            );
        }
    };
    same(
        run(
            &spec("liblumen_edge.so", "lumen_tanh_f32", "tanh", "f32"),
            &x,
            None,
        ),
        xs.iter().map(|v| v.tanh()).collect(),
    );
    let mut d = spec(
        "liblumen_edge.so",
        "lumen_sigmoid_deriv_f32",
        "sigmoid",
        "f32",
    );
    d.role = KernelRole::Derivative;
    same(
        run(&d, &x, None),
        xs.iter().map(|&v| sig(v) * (1.0 - sig(v))).collect(),
    );
    let g: Vec<u32> = bits(
        &(0..x.len())
            .map(|i| 0.25 + i as f32 / 7.0)
            .collect::<Vec<_>>(),
    );
    let mut gr = spec(
        "liblumen_edge.so",
        "lumen_sigmoid_grad_f32",
        "sigmoid",
        "f32",
    );
    gr.role = KernelRole::Gradient { from_output: false };
    same(
        run(&gr, &x, Some(&g)),
        xs.iter()
            .zip(&g)
            .map(|(&v, &gb)| f32::from_bits(gb) * (sig(v) * (1.0 - sig(v))))
            .collect(),
    );
    let y: Vec<u32> = bits(&xs.iter().map(|v| v.tanh()).collect::<Vec<_>>());
    let mut gy = spec("liblumen_edge.so", "lumen_tanh_grad_y_f32", "tanh", "f32");
    gy.role = KernelRole::Gradient { from_output: true };
    same(
        run(&gy, &y, Some(&g)),
        y.iter()
            .zip(&g)
            .map(|(&yb, &gb)| {
                let t = f32::from_bits(yb);
                f32::from_bits(gb) * (1.0 - t * t)
            })
            .collect(),
    );
    let mut elu = spec("liblumen_edge.so", "lumen_elu_f32", "elu", "f32");
    elu.param_passing = ParamPassing::Trailing;
    elu.params = vec![("alpha".into(), "0.5".into())];
    elu.in_place = true;
    same(
        run(&elu, &x, None),
        xs.iter()
            .map(|&v| if v > 0.0 { v } else { 0.5 * v.exp_m1() })
            .collect(),
    );
    let rs = spec(
        "liblumen_edge_rs.so",
        "lumen_softsign_f32",
        "softsign",
        "f32",
    );
    same(
        run(&rs, &x, None),
        xs.iter().map(|&v| v / (1.0 + v.abs())).collect(),
    );
}

#[test]
fn sixteen_bit_kernels_match_independent_conversions() {
    let x = all16();
    // half's f32 -> f16 / bf16 conversions round to nearest even, like the kernels' own.
    let got = run(
        &spec("liblumen_edge.so", "lumen_sigmoid_f16", "sigmoid", "f16"),
        &x,
        None,
    );
    for (&b, &y) in x.iter().zip(&got) {
        let v = f16::from_bits(b as u16).to_f32();
        let want = f16::from_f32(1.0 / (1.0 + (-v).exp()));
        assert!(
            want.to_bits() as u32 == y || (want.is_nan() && f16::from_bits(y as u16).is_nan()),
            "{b:#x}"
        );
    }
    let got = run(
        &spec("liblumen_edge.so", "lumen_tanh_bf16", "tanh", "bf16"),
        &x,
        None,
    );
    for (&b, &y) in x.iter().zip(&got) {
        let want = bf16::from_f32(bf16::from_bits(b as u16).to_f32().tanh());
        assert!(
            want.to_bits() as u32 == y || (want.is_nan() && bf16::from_bits(y as u16).is_nan()),
            "{b:#x}"
        );
    }
}

#[test]
fn f16_elu_turns_nan_exactly_where_exp_overflows_binary16() {
    let x: Vec<u32> = (0..0x7c00).collect(); // +0 .. largest finite binary16
    let got = run(
        &spec("liblumen_edge.so", "lumen_elu_f16", "elu", "f16"),
        &x,
        None,
    );
    // First positive binary16 whose e^x rounds to inf in binary16 (largest finite 65504,
    // IEEE 754 binary16), computed with f64 exp and half's rounding.
    let first_overflow = x
        .iter()
        .copied()
        .find(|&b| f16::from_f64(f16::from_bits(b as u16).to_f64().exp()).is_infinite())
        .unwrap();
    assert_eq!(first_overflow, 0x498c); // 11.09375
    for (&b, &y) in x.iter().zip(&got) {
        let nan = f16::from_bits(y as u16).is_nan();
        assert_eq!(nan, b >= first_overflow, "x={b:#06x} y={y:#06x}");
        if !nan && b > 0 {
            assert_eq!(y, b, "ELU is the identity for x > 0");
        }
    }
}

#[test]
fn simd_sigmoid_is_close_to_libm() {
    let x = f32_sample(20_000);
    let got = run(
        &spec(
            "liblumen_edge.so",
            "lumen_sigmoid_f32_simd",
            "sigmoid",
            "f32",
        ),
        &x,
        None,
    );
    let mut worst = 0i64;
    for (&b, &y) in x.iter().zip(&got) {
        let v = f32::from_bits(b);
        if !(-80.0..80.0).contains(&v) {
            continue;
        }
        let want = (1.0f64 / (1.0 + (-(v as f64)).exp())) as f32;
        worst = worst.max((want.to_bits() as i64 - y as i64).abs());
    }
    assert!(worst <= 8, "worst {worst} steps from the f64-based sigmoid");
}
