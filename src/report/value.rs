//! The {"bits": "0x…", "value": …} object every report uses for an input or output value.

use crate::format::{hex, Class, Format};
use serde::Serialize;

/// A value of a format as reports show it: its bit pattern and its value (a number, or the
/// strings "nan", "inf", "-inf").
#[derive(Clone, Debug, PartialEq, Serialize, serde::Deserialize)]
pub struct BitsValue {
    /// "0x…" padded to the format's width.
    pub bits: String,
    /// The value; NaN and infinities as strings because JSON has no such numbers.
    pub value: serde_json::Value,
}

impl BitsValue {
    /// The report object of a bit pattern.
    pub fn new(format: &dyn Format, bits: u32) -> Self {
        let v = format.to_f64(bits);
        let value = match format.classify(bits) {
            Class::Nan => serde_json::Value::from("nan"),
            Class::Infinite if v < 0.0 => serde_json::Value::from("-inf"),
            Class::Infinite => serde_json::Value::from("inf"),
            _ => serde_json::Value::from(v),
        };
        BitsValue {
            bits: hex(format, bits),
            value,
        }
    }
}

/// Shortest decimal that reads back as the same binary64 (and so as the same pattern).
pub fn display_value(format: &dyn Format, bits: u32) -> String {
    match format.classify(bits) {
        Class::Nan => "nan".to_string(),
        _ => format!("{:?}", format.to_f64(bits)),
    }
}
