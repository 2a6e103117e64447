//! OCP 8-bit floating point E5M2 (OFP8 specification v1.0): bias 15, precision 3, subnormals,
//! IEEE-style infinities and NaNs, max normal 57344.

use super::{Format, Layout};

/// E5M2; `saturating` picks the OFP8 conversion mode that clamps overflow (and infinities) to
/// ±57344 (the default mode gives ±∞).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct E5m2 {
    /// Overflow saturates to ±max instead of giving ±∞.
    pub saturating: bool,
}

impl Format for E5m2 {
    fn name(&self) -> &'static str {
        if self.saturating {
            "e5m2-sat"
        } else {
            "e5m2"
        }
    }
    fn long_name(&self) -> &'static str {
        if self.saturating {
            "OCP FP8 E5M2 (saturating conversion)"
        } else {
            "OCP FP8 E5M2"
        }
    }
    fn layout(&self) -> Layout {
        let l = Layout::new(5, 2);
        if self.saturating {
            l.saturating()
        } else {
            l
        }
    }
}
