//! Strided kernels, `void NAME(const T *x, ptrdiff_t sx, T *y, ptrdiff_t sy, size_t n)`: the
//! declared signature, the strides the sweep calls with, and where element i of a strided
//! array lies (x points at element 0, element i is x[i*sx], strides may be negative).

/// Largest |stride| ulpgauge calls with: buffers span n·|stride| elements, so this bounds them.
pub const MAX_STRIDE: i32 = 64;

/// How a kernel receives its arrays.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Signature {
    /// `(x, y, n)`: contiguous arrays.
    Contiguous,
    /// `(x, sx, y, sy, n)`: element strides; the sweep calls it with these.
    Strided {
        /// Stride of x in elements.
        sx: i32,
        /// Stride of y in elements.
        sy: i32,
    },
}

impl Signature {
    /// The manifest and `--signature` spelling.
    pub fn name(self) -> &'static str {
        match self {
            Signature::Contiguous => "contiguous",
            Signature::Strided { .. } => "strided",
        }
    }

    /// The strides the sweep calls with: (1, 1) for contiguous kernels.
    pub fn strides(self) -> (i32, i32) {
        match self {
            Signature::Contiguous => (1, 1),
            Signature::Strided { sx, sy } => (sx, sy),
        }
    }

    /// Builds a signature from its name and the optional sweep strides (`SX,SY` text); every
    /// error is one line naming what is wrong.
    pub fn parse(name: &str, strides: Option<&str>) -> Result<Signature, String> {
        match name {
            "contiguous" => match strides {
                None => Ok(Signature::Contiguous),
                Some(_) => Err("strides apply to strided kernels only (signature strided)".into()),
            },
            "strided" => {
                let (sx, sy) = strides.map_or(Ok((1, 1)), parse_strides)?;
                Ok(Signature::Strided { sx, sy })
            }
            other => Err(format!(
                "unknown signature '{other}' (known: contiguous, strided)"
            )),
        }
    }
}

/// The sweep's strides as a manifest or spec writes them: `"2,-1"` or `[2, -1]`.
#[derive(serde::Deserialize, Clone, Debug)]
#[serde(untagged)]
pub enum StridesValue {
    /// `"SX,SY"`.
    Text(String),
    /// `[SX, SY]`.
    Pair(Vec<i64>),
}

impl StridesValue {
    /// The `SX,SY` text [`parse_strides`] reads.
    pub fn text(&self) -> String {
        match self {
            StridesValue::Text(t) => t.clone(),
            StridesValue::Pair(v) => v
                .iter()
                .map(|s| s.to_string())
                .collect::<Vec<_>>()
                .join(","),
        }
    }
}

/// Parses `SX,SY` for the sweep: integers, neither 0 (x stride 0 would measure one input, y
/// stride 0 overlaps the outputs), each within ±[`MAX_STRIDE`].
pub fn parse_strides(text: &str) -> Result<(i32, i32), String> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    let [a, b] = parts[..] else {
        return Err(format!("strides '{text}': expected SX,SY (two integers)"));
    };
    let one = |s: &str, name: &str| -> Result<i32, String> {
        let v: i64 = s
            .parse()
            .map_err(|_| format!("strides '{text}': {name} '{s}' is not an integer"))?;
        if v == 0 {
            return Err(format!(
                "strides '{text}': {name} is 0 (the stride-0 broadcast is a hygiene check, not a sweep)"
            ));
        }
        if v.abs() > MAX_STRIDE as i64 {
            return Err(format!(
                "strides '{text}': |{name}| is at most {MAX_STRIDE}"
            ));
        }
        Ok(v as i32)
    };
    Ok((one(a, "SX")?, one(b, "SY")?))
}

/// One strided array of n elements: where each element lies, in elements from the lowest
/// address the array touches.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Span {
    /// Stride in elements.
    pub stride: isize,
    /// Elements.
    pub n: usize,
}

impl Span {
    /// Elements from the lowest touched address to the highest, inclusive (0 when n is 0).
    pub fn elems(self) -> usize {
        match self.n {
            0 => 0,
            n => (n - 1) * self.stride.unsigned_abs() + 1,
        }
    }
    /// Position of element 0 (the pointer the kernel receives): above the others when the
    /// stride is negative.
    pub fn lead(self) -> usize {
        if self.stride < 0 {
            self.elems().saturating_sub(1)
        } else {
            0
        }
    }
    /// Position of element i.
    pub fn pos(self, i: usize) -> usize {
        (self.lead() as isize + i as isize * self.stride) as usize
    }
    /// Whether position p holds an element (the other positions are gaps).
    pub fn is_element(self, p: usize) -> bool {
        match self.stride.unsigned_abs() {
            0 => p == 0,
            s => p % s == 0,
        }
    }
}

/// Where byte offset `off` from y[0] lies for n elements of `eb` bytes at stride `sy`, for
/// messages: inside a gap between two elements, or beyond one end of the strided span.
pub fn where_in(off: i64, n: usize, eb: usize, sy: i32) -> String {
    let (eb, step) = (eb as i64, sy as i64 * eb as i64);
    let last = (n as i64 - 1).max(0) * step;
    let (lo, hi) = (last.min(0), last.max(0) + eb);
    if off >= hi {
        format!("{} bytes past the top of the strided span", off - hi)
    } else if off < lo {
        format!("{} bytes before the bottom of the strided span", lo - off)
    } else {
        let i = (off as f64 / step as f64).floor() as i64;
        format!("in the gap between y[{i}] and y[{}]", i + 1)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spans_place_element_zero_at_the_pointer() {
        let s = Span { stride: 3, n: 4 };
        assert_eq!((s.elems(), s.lead(), s.pos(3)), (10, 0, 9));
        let s = Span { stride: -2, n: 4 };
        assert_eq!((s.elems(), s.lead(), s.pos(0), s.pos(3)), (7, 6, 6, 0));
        let s = Span { stride: 0, n: 5 };
        assert_eq!((s.elems(), s.lead(), s.pos(4)), (1, 0, 0));
        assert!(Span { stride: -3, n: 2 }.is_element(3));
        assert!(!Span { stride: -3, n: 2 }.is_element(2));
    }

    #[test]
    fn sweep_strides_are_bounded_and_never_zero() {
        assert_eq!(parse_strides("2,-3"), Ok((2, -3)));
        assert_eq!(parse_strides(" -64 , 64 "), Ok((-64, 64)));
        for bad in ["0,1", "1,0", "65,1", "1", "1,2,3", "a,1", "1.5,1", ""] {
            assert!(parse_strides(bad).is_err(), "{bad}");
        }
        assert!(Signature::parse("contiguous", Some("2,1")).is_err());
        assert_eq!(
            Signature::parse("strided", None),
            Ok(Signature::Strided { sx: 1, sy: 1 })
        );
    }

    #[test]
    fn offsets_are_named_by_the_gap_they_fall_in() {
        // 4-byte elements at stride 2: y[1] at byte 8, its gap bytes 12..16.
        assert_eq!(where_in(12, 3, 4, 2), "in the gap between y[1] and y[2]");
        assert_eq!(
            where_in(20, 3, 4, 2),
            "0 bytes past the top of the strided span"
        );
        assert_eq!(
            where_in(-4, 3, 4, 2),
            "4 bytes before the bottom of the strided span"
        );
        // Stride -2: y[1] at byte -8, the gap above it (bytes -4..0) lies between y[0] and y[1].
        assert_eq!(where_in(-4, 3, 4, -2), "in the gap between y[0] and y[1]");
        assert_eq!(
            where_in(5, 3, 4, -2),
            "1 bytes past the top of the strided span"
        );
    }
}
