//! Kernels built on the C library's expf, tanhf and erff, checked exhaustively on a fixed f32
//! range; the ulp figures are recomputed with mpmath (tests/requirements.txt) at 60 digits.

mod check_support;

use check_support::{config, temp_dir};
use std::io::Write;
use ulpgauge::check::{run_check, CheckRole, InProcessKernel};
use ulpgauge::format::Binary32;
use ulpgauge::sweep::SweepKind;

extern "C" {
    /// erff from the C library (ISO C99 §7.12.8.1); libm is linked by Rust's std on Linux.
    fn erff(x: f32) -> f32;
}

fn sigmoid_expf(x: f32) -> f32 {
    1.0 / (1.0 + (-x).exp())
}
fn tanh_tanhf(x: f32) -> f32 {
    x.tanh()
}
fn gelu_erff(x: f32) -> f32 {
    0.5 * x * (1.0 + unsafe { erff(x * std::f32::consts::FRAC_1_SQRT_2) })
}

/// Range [LO, HI) of 8192 consecutive binary32 values: ulp is 2^−23 on [1, 2), so
/// HI − LO = 2^13 · 2^−23 = 2^−10.
const LO: f32 = 1.5;
const RANGE: &str = "1.5,1.5009765625";

/// max ulp, mean ulp, correctly rounded count and worst input, from mpmath.
fn mpmath_figures(function: &str, inputs: &[u32], outputs: &[u32]) -> (f64, f64, u64, u32) {
    let dir = temp_dir(&format!("libm-{function}"));
    let data = dir.join("points.txt");
    let mut f = std::fs::File::create(&data).unwrap();
    for (x, y) in inputs.iter().zip(outputs) {
        writeln!(f, "{x} {y}").unwrap();
    }
    drop(f);
    // Binary32: p = 24, emin = −126 (IEEE 754-2019 Table 3.5); ulp per Muller RR-5504.
    let script = r#"
import sys, struct, mpmath
mpmath.mp.dps = 60
fn = sys.argv[1]
def f32(b): return mpmath.mpf(struct.unpack('<f', struct.pack('<I', b))[0])
def ref(x):
    if fn == 'sigmoid': return 1/(1+mpmath.exp(-x))
    if fn == 'tanh': return mpmath.tanh(x)
    return x/2*(1+mpmath.erf(x/mpmath.sqrt(2)))
mx, worst, total, cr = mpmath.mpf(0), None, mpmath.mpf(0), 0
for line in open(sys.argv[2]):
    xb, yb = map(int, line.split())
    x, yh = f32(xb), f32(yb)
    y = ref(x)
    e = max(int(mpmath.floor(mpmath.log(abs(y), 2))), -126)
    u = mpmath.ldexp(1, e - 23)
    err = abs(yh - y) / u
    total += err
    # Correctly rounded: no other binary32 is nearer (ties cannot occur for these irrationals).
    if err < mpmath.mpf(1)/2: cr += 1
    if worst is None or err > mx: mx, worst = err, xb
print(float(mx), float(total / sum(1 for _ in open(sys.argv[2]))), cr, worst)
"#;
    let out = std::process::Command::new("python3")
        .args(["-c", script, function, data.to_str().unwrap()])
        .output()
        .expect("python3 with mpmath is needed (tests/setup.sh installs it)");
    assert!(
        out.status.success(),
        "mpmath: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    let v: Vec<&str> = text.split_whitespace().collect();
    (
        v[0].parse().unwrap(),
        v[1].parse().unwrap(),
        v[2].parse().unwrap(),
        v[3].parse().unwrap(),
    )
}

fn check(function: &str, kernel: fn(f32) -> f32) {
    let mut k = InProcessKernel::new(|x, _| Some(kernel(f32::from_bits(x)).to_bits()));
    let cfg = config(
        function,
        &Binary32,
        CheckRole::Forward,
        &[SweepKind::Exhaustive],
        Some(RANGE),
    );
    let report = run_check(&mut k, &cfg).expect("check");
    let acc = &report.accuracy.figures;
    let inputs: Vec<u32> = (0..8192u32).map(|i| LO.to_bits() + i).collect();
    let outputs: Vec<u32> = inputs
        .iter()
        .map(|&x| kernel(f32::from_bits(x)).to_bits())
        .collect();
    let (max, mean, cr, worst) = mpmath_figures(function, &inputs, &outputs);
    assert_eq!(acc.points, 8192, "{function}");
    // ulpgauge keeps y to binary64 precision: 2^−53 relative is under 2^−29 ulp of binary32.
    let tol = 2f64.powi(-28);
    assert!(
        (acc.max_ulp - max).abs() <= tol,
        "{function}: max {} vs mpmath {max}",
        acc.max_ulp
    );
    assert!(
        (acc.mean_ulp - mean).abs() <= tol,
        "{function}: mean {} vs mpmath {mean}",
        acc.mean_ulp
    );
    assert_eq!(
        (acc.correctly_rounded * 8192.0).round() as u64,
        cr,
        "{function}"
    );
    assert_eq!(
        acc.worst.as_ref().unwrap().input.bits,
        format!("0x{worst:08x}"),
        "{function}"
    );
}

#[test]
fn expf_sigmoid_matches_mpmath() {
    check("sigmoid", sigmoid_expf);
}

#[test]
fn tanhf_matches_mpmath() {
    check("tanh", tanh_tanhf);
}

#[test]
fn erff_gelu_matches_mpmath() {
    check("gelu", gelu_erff);
}
