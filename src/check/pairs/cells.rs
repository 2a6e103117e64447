//! The (a, b) plane in cells: one cell per sign × binade of a and of b (zero, the subnormals
//! and infinity each one cell per sign), so the grid is bounded by the format, never by the
//! number of findings.

use crate::format::{Class, Format};

/// Cells per sign: zero, subnormal, the normal binades emin..=emax, infinity.
pub fn per_sign(format: &dyn Format) -> usize {
    (format.emax() - format.emin() + 4) as usize
}

/// Cells along one axis, ordered by value: −∞, −max binade, …, −0, +0, …, +∞.
pub fn axis(format: &dyn Format) -> usize {
    2 * per_sign(format)
}

/// The cell of a pattern along its axis; `None` for NaN.
pub fn cell(format: &dyn Format, bits: u32) -> Option<usize> {
    let slots = per_sign(format);
    let slot = match format.classify(bits) {
        Class::Nan => return None,
        Class::Zero => 0,
        Class::Subnormal => 1,
        Class::Infinite => slots - 1,
        // A normal pattern's binade is its exponent field minus the bias, and emin = 1 − bias:
        // slot = (field − bias) − emin + 2 = field + 1 (no logarithm per pair).
        _ => {
            let l = format.layout();
            (l.sign_and_exponent(bits) & ((1 << l.exp_bits()) - 1)) as usize + 1
        }
    };
    Some(if format.is_sign_negative(bits) {
        slots - 1 - slot
    } else {
        slots + slot
    })
}

/// What a cell holds, in words: `0`, `-0`, `subnormal`, `-subnormal`, `inf`, `-inf`, or
/// `[2^e, 2^(e+1))` with its sign.
pub fn label(format: &dyn Format, cell: usize) -> String {
    let slots = per_sign(format);
    let (negative, slot) = if cell < slots {
        (true, slots - 1 - cell)
    } else {
        (false, cell - slots)
    };
    let sign = if negative { "-" } else { "" };
    match slot {
        0 => format!("{sign}0"),
        1 => format!("{sign}subnormal"),
        s if s == slots - 1 => format!("{sign}inf"),
        s => {
            let e = s as i32 - 2 + format.emin();
            format!("{sign}[2^{e}, 2^{})", e + 1)
        }
    }
}

/// The binade exponent of a normal cell (`None` for zero, subnormal, infinity), signed cells
/// giving their magnitude's exponent.
pub fn exponent(format: &dyn Format, cell: usize) -> Option<i32> {
    let slots = per_sign(format);
    let slot = if cell < slots {
        slots - 1 - cell
    } else {
        cell - slots
    };
    (slot >= 2 && slot < slots - 1).then(|| slot as i32 - 2 + format.emin())
}

/// A pattern drawn from a cell, its free bits from `r` (every pattern of the cell equally
/// likely).
pub fn pattern_in(format: &dyn Format, cell: usize, r: u64) -> u32 {
    let slots = per_sign(format);
    let (negative, slot) = if cell < slots {
        (true, slots - 1 - cell)
    } else {
        (false, cell - slots)
    };
    let frac_bits = format.precision() - 1;
    let frac = (r as u32) & ((1u32 << frac_bits) - 1);
    let magnitude = match slot {
        0 => 0,
        1 => frac.max(1),
        s if s == slots - 1 => format.infinity(false),
        s => ((s as u32 - 1) << frac_bits) | frac,
    };
    let sign = if negative {
        1u32 << (format.width() - 1)
    } else {
        0
    };
    sign | magnitude
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Binary16, Binary32};

    #[test]
    fn cells_follow_the_binades() {
        // binary16: emin −14, emax 15 (IEEE 754-2019 Table 3.5): 33 cells per sign.
        let f = &Binary16;
        assert_eq!(per_sign(f), 33);
        for bits in 0..=0xffffu32 {
            let Some(c) = cell(f, bits) else { continue };
            assert_eq!(
                cell(f, pattern_in(f, c, bits as u64 * 7919)),
                Some(c),
                "{bits:#x}"
            );
        }
        // 1.0 = 0x3c00 lies in [2^0, 2^1); 65504 = 0x7bff in [2^15, 2^16).
        assert_eq!(label(f, cell(f, 0x3c00).unwrap()), "[2^0, 2^1)");
        assert_eq!(label(f, cell(f, 0xfbff).unwrap()), "-[2^15, 2^16)");
        assert_eq!(label(f, cell(f, 0x8001).unwrap()), "-subnormal");
        let g = &Binary32;
        assert_eq!(axis(g), 2 * 257);
        assert_eq!(exponent(g, cell(g, 0x3f80_0000).unwrap()), Some(0));
    }
}
