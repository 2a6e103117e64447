//! Checks of a state read from a file (a shard's accumulators): every field is bounded and
//! consistent with the others before any figure is computed from it, so an edited or
//! corrupted state is refused with the field's name instead of panicking, aborting or
//! allocating what a length in it says.

use crate::format::Layout;

/// A failed check: the field's path and what is wrong with it.
pub type Invalid = String;

/// Fails with `field: why` unless `ok`.
pub fn ensure(ok: bool, field: &str, why: impl FnOnce() -> String) -> Result<(), Invalid> {
    if ok {
        Ok(())
    } else {
        Err(format!("{field}: {}", why()))
    }
}

/// Prefixes the field path of a nested check's failure with its parent's.
pub fn within<T>(parent: &str, r: Result<T, Invalid>) -> Result<T, Invalid> {
    r.map_err(|e| format!("{parent}.{e}"))
}

/// A bit pattern of the format (no bits above its width).
pub fn pattern(l: Layout, bits: u32, field: &str) -> Result<(), Invalid> {
    ensure(l.width() >= 32 || bits >> l.width() == 0, field, || {
        format!("{bits:#x} is not a {}-bit pattern", l.width())
    })
}

/// A finite input pattern of the format.
pub fn finite_pattern(l: Layout, bits: u32, field: &str) -> Result<(), Invalid> {
    pattern(l, bits, field)?;
    ensure(l.is_finite(bits), field, || {
        format!("{bits:#x} is not a finite input")
    })
}

/// A count no sweep can exceed: one per bit pattern of the widest format, for each of up to
/// 2^20 shards (so sums of counts never overflow).
pub const MAX_COUNT: u64 = 1 << 52;

/// A count within [`MAX_COUNT`].
pub fn count(n: u64, field: &str) -> Result<(), Invalid> {
    ensure(n <= MAX_COUNT, field, || format!("{n} is beyond any sweep"))
}

/// An error in ulps: finite and not negative.
pub fn error(e: f64, field: &str) -> Result<(), Invalid> {
    ensure(e.is_finite() && e >= 0.0, field, || {
        format!("{e} is not an error in ulps")
    })
}

/// A report value `{"bits","value"}` exactly as the format writes its pattern.
pub fn bits_value(
    format: &dyn crate::format::Format,
    v: &crate::report::BitsValue,
    field: &str,
) -> Result<u32, Invalid> {
    let bits = crate::format::parse_hex(format, &v.bits).map_err(|e| format!("{field}: {e}"))?;
    ensure(
        crate::report::BitsValue::new(format, bits) == *v,
        field,
        || format!("{} is not the value of {}", v.value, v.bits),
    )?;
    Ok(bits)
}

/// A point as a check evaluates it: patterns of the format and a reference whose exact
/// value is a number of a plausible binade.
pub fn point(l: Layout, p: &crate::measure::Point, field: &str) -> Result<(), Invalid> {
    pattern(l, p.input, field)?;
    for bits in [p.second, p.output].into_iter().flatten() {
        pattern(l, bits, field)?;
    }
    for r in std::iter::once(&p.reference).chain(&p.left) {
        pattern(l, r.bits, field)?;
        if let Some(e) = r.exact {
            // Every binary64 lies within 2^-1075..2^1024; the binade is at least emin.
            ensure(
                !e.approx.is_nan() && (l.emin()..=1100).contains(&e.binade),
                field,
                || format!("exact value {} in binade {}", e.approx, e.binade),
            )?;
        }
    }
    Ok(())
}
