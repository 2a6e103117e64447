//! Built-in in-process kernels of the fictional "Lumen Edge" runtime team, for tests and for
//! trying `check` without a shared library. Each is a closure over bit patterns.

use super::kernel::{InProcessKernel, KernelUnderTest};
use super::CheckRole;
use crate::activation::{Constants, Entry, Role};
use crate::format::{Class, Format};
use crate::reference::{Evaluator, ParamRounding};
use rug::Rational;

/// Names accepted by [`builtin`].
pub const BUILTIN_NAMES: [&str; 5] = [
    "reference",
    "next-up",
    "flush-to-zero",
    "blended-elu",
    "crash-on-nan",
];

/// A built-in kernel for a function, role and format: `reference` returns the correctly rounded
/// value; `next-up` the next representable value above it; `flush-to-zero` flushes subnormal
/// inputs and outputs; `blended-elu` computes both ELU branches and blends them arithmetically
/// (NaN once e^x overflows); `crash-on-nan` is `reference` but "crashes" on NaN inputs.
pub fn builtin(
    name: &str,
    function: Entry,
    format: &'static dyn Format,
    role: CheckRole,
    params: &[(String, Rational)],
    rounding: ParamRounding,
) -> Result<Box<dyn KernelUnderTest>, String> {
    builtin_mixed(name, function, format, format, role, params, rounding)
}

/// [`builtin`] for a kernel whose inputs (x, g) are in `input` and outputs in `format`.
pub fn builtin_mixed(
    name: &str,
    function: Entry,
    input: &'static dyn Format,
    format: &'static dyn Format,
    role: CheckRole,
    params: &[(String, Rational)],
    rounding: ParamRounding,
) -> Result<Box<dyn KernelUnderTest>, String> {
    if matches!(role, CheckRole::Gradient { from_output: true }) {
        return Err("built-in kernels take x, not f(x): drop --from-output".into());
    }
    let constants = Constants::resolve(function, params, rounding, format);
    let evaluator_role = if role == CheckRole::Forward {
        Role::Forward
    } else {
        Role::Derivative
    };
    let evaluator = Evaluator::new(function, evaluator_role, constants, format).with_input(input);
    // A 16-bit kernel without g looks its answers up in a table computed once, in parallel.
    let table: Option<Vec<u32>> =
        (input.width() <= 16 && !matches!(role, CheckRole::Gradient { .. })).then(|| {
            use rayon::prelude::*;
            (0..input.pattern_count() as u32)
                .into_par_iter()
                .map(|x| {
                    evaluator
                        .reference(x)
                        .map(|r| r.bits)
                        .unwrap_or(format.quiet_nan())
                })
                .collect()
        });
    let exact = move |x: u32, g: Option<u32>| -> u32 {
        if let (Some(t), None) = (&table, g) {
            return t[x as usize];
        }
        let r = match g {
            None => evaluator.reference(x),
            Some(g) => {
                let g = Rational::from_f64(input.to_f64(g)).expect("finite g");
                evaluator.reference_scaled(x, Some(&g))
            }
        };
        r.map(|r| r.bits).unwrap_or(format.quiet_nan())
    };
    let finite = move |b: u32| !matches!(format.classify(b), Class::Nan | Class::Infinite);
    Ok(match name {
        "reference" => Box::new(InProcessKernel::new(move |x, g| Some(exact(x, g)))),
        "next-up" => Box::new(InProcessKernel::new(move |x, g| {
            let y = exact(x, g);
            Some(if finite(y) { format.next_up(y) } else { y })
        })),
        "flush-to-zero" => Box::new(InProcessKernel::new(move |x, g| {
            let in_sign = input.infinity(true) & !input.infinity(false);
            let sign = format.infinity(true) & !format.infinity(false);
            let x = if input.classify(x) == Class::Subnormal {
                x & in_sign
            } else {
                x
            };
            let y = exact(x, g);
            Some(if format.classify(y) == Class::Subnormal {
                y & sign
            } else {
                y
            })
        })),
        "crash-on-nan" => Box::new(InProcessKernel::new(move |x, g| {
            (input.classify(x) != Class::Nan).then(|| exact(x, g))
        })),
        "blended-elu" => {
            if function.name() != "elu"
                || role != CheckRole::Forward
                || input.name() != format.name()
            {
                return Err("blended-elu is a forward elu kernel".into());
            }
            Box::new(InProcessKernel::new(move |x, _| {
                Some(blended_elu(format, x))
            }))
        }
        other => {
            return Err(format!(
                "unknown built-in kernel '{other}' (known: {})",
                BUILTIN_NAMES.join(", ")
            ))
        }
    })
}

/// ELU with alpha = 1 as a branch-free SIMD kernel writes it: m·x + (1 − m)·(e^x − 1) with
/// m = (x > 0), every operation rounded to the format; once e^x rounds to +∞, (1 − m)·∞ = 0·∞
/// is NaN even where x > 0 selects the linear branch.
pub fn blended_elu(format: &dyn Format, x: u32) -> u32 {
    let round = |v: f64| -> f64 {
        // Round a binary64 value to the format (ties to even) via the exact rational.
        let bits = match Rational::from_f64(v) {
            Some(q) => crate::reference::round_rational(&q, v.is_sign_negative(), format),
            None if v.is_nan() => format.quiet_nan(),
            None => format.infinity(v < 0.0),
        };
        format.to_f64(bits)
    };
    let xv = format.to_f64(x);
    let m = if xv > 0.0 { 1.0 } else { 0.0 };
    let e = round(xv.exp());
    let negative_branch = round(e - 1.0);
    let y = round(round(m * xv) + round((1.0 - m) * negative_branch));
    match Rational::from_f64(y) {
        Some(q) => crate::reference::round_rational(&q, y.is_sign_negative(), format),
        None if y.is_nan() => format.quiet_nan(),
        None => format.infinity(y < 0.0),
    }
}
