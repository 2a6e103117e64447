//! OCP 8-bit floating point E4M3 (OFP8 specification v1.0): bias 7, precision 4, subnormals,
//! no infinities, one NaN pattern per sign (S.1111.111), max normal 448.

use super::{Format, Layout};

/// E4M3; `saturating` picks the OFP8 conversion mode that clamps overflow to ±448 (the default
/// mode turns it into NaN).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct E4m3 {
    /// Overflow saturates to ±max instead of giving NaN.
    pub saturating: bool,
}

impl Format for E4m3 {
    fn name(&self) -> &'static str {
        if self.saturating {
            "e4m3-sat"
        } else {
            "e4m3"
        }
    }
    fn long_name(&self) -> &'static str {
        if self.saturating {
            "OCP FP8 E4M3 (saturating conversion)"
        } else {
            "OCP FP8 E4M3"
        }
    }
    fn layout(&self) -> Layout {
        let l = Layout::new(4, 3).finite_only();
        if self.saturating {
            l.saturating()
        } else {
            l
        }
    }
}
