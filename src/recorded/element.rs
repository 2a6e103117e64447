//! The element types a recorded array may hold, and which of them can carry each format.

use crate::format::Format;
use npyz::{DType, Endianness, TypeChar};

/// What one element of a recorded array is.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Element {
    /// IEEE binary32 values (`<f4`).
    Float32,
    /// binary32 bit patterns (`<u4`).
    Bits32,
    /// IEEE binary16 values (`<f2`).
    Float16,
    /// 16-bit patterns of binary16 or bfloat16 (`<u2`).
    Bits16,
    /// Two raw bytes: what ml_dtypes' `bfloat16` saves as (`<V2`), read in little-endian order.
    Void16,
}

impl Element {
    /// Bytes per element.
    pub fn size(self) -> usize {
        match self {
            Element::Float32 | Element::Bits32 => 4,
            _ => 2,
        }
    }

    /// The numpy name, for messages.
    pub fn describe(self) -> &'static str {
        match self {
            Element::Float32 => "float32",
            Element::Bits32 => "uint32 bit patterns",
            Element::Float16 => "float16",
            Element::Bits16 => "uint16 bit patterns",
            Element::Void16 => "2-byte void (ml_dtypes bfloat16)",
        }
    }

    /// The element and its byte order (true: big-endian) of a .npy dtype, or why it is not
    /// one of ours.
    pub fn of_dtype(dtype: &DType) -> Result<(Element, bool), String> {
        let DType::Plain(ts) = dtype else {
            return Err(format!(
                "dtype {} is a structured or nested array; expected a plain 1-D array of float32, float16 or uint16",
                dtype.descr().trim()
            ));
        };
        let element = match (ts.type_char(), ts.size_field()) {
            (TypeChar::Float, 4) => Element::Float32,
            (TypeChar::Uint, 4) => Element::Bits32,
            (TypeChar::Float, 2) => Element::Float16,
            (TypeChar::Uint, 2) => Element::Bits16,
            (TypeChar::RawData, 2) => Element::Void16,
            _ => {
                return Err(format!(
                    "dtype '{ts}' is not one of float32 ('<f4'), float16 ('<f2'), uint16 bit patterns ('<u2'), uint32 bit patterns ('<u4') or ml_dtypes bfloat16 ('<V2')"
                ))
            }
        };
        // A void element has no byte order of its own: ml_dtypes writes the machine's (x86-64 and
        // AArch64 are little-endian).
        let big = element != Element::Void16 && ts.endianness() == Endianness::Big;
        Ok((element, big))
    }

    /// Fails unless this element can carry the patterns of `format` exactly.
    pub fn holds(self, format: &dyn Format) -> Result<(), String> {
        let fits = matches!(
            (format.name(), self),
            ("f32", Element::Float32 | Element::Bits32)
                | ("f16", Element::Float16 | Element::Bits16)
                | ("bf16", Element::Bits16 | Element::Void16)
        );
        if fits {
            return Ok(());
        }
        let want = match format.name() {
            "f32" => "float32 (or uint32 bit patterns)",
            "f16" => "float16 (or uint16 bit patterns)",
            _ if format.width() == 8 => {
                return Err(format!(
                    "--format {}: recorded sets of 8-bit formats are not supported; check the kernel through the C ABI",
                    format.name()
                ))
            }
            _ => "uint16 bit patterns (or ml_dtypes bfloat16); numpy has no bfloat16 dtype",
        };
        Err(format!(
            "holds {} but --format {} needs {want}: record the values in the kernel's own format",
            self.describe(),
            format.name()
        ))
    }

    /// The bit pattern of the element at the start of `bytes`.
    #[inline]
    pub fn decode(self, bytes: &[u8], big: bool) -> u32 {
        if self.size() == 4 {
            let b = [bytes[0], bytes[1], bytes[2], bytes[3]];
            if big {
                u32::from_be_bytes(b)
            } else {
                u32::from_le_bytes(b)
            }
        } else {
            let b = [bytes[0], bytes[1]];
            u32::from(if big {
                u16::from_be_bytes(b)
            } else {
                u16::from_le_bytes(b)
            })
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Bfloat16, Binary16, Binary32};

    fn element(descr: &str) -> Result<(Element, bool), String> {
        Element::of_dtype(&DType::parse(&format!("'{descr}'")).expect("dtype"))
    }

    #[test]
    fn dtypes_map_to_elements_and_byte_orders() {
        // Type strings as numpy writes them (numpy.lib.format, the .npy format description).
        assert_eq!(element("<f4"), Ok((Element::Float32, false)));
        assert_eq!(element(">f4"), Ok((Element::Float32, true)));
        assert_eq!(element("<f2"), Ok((Element::Float16, false)));
        assert_eq!(element("<u2"), Ok((Element::Bits16, false)));
        assert_eq!(element("<u4"), Ok((Element::Bits32, false)));
        // ml_dtypes 0.7 saves a bfloat16 array as '<V2' (checked with np.save).
        assert_eq!(element("<V2"), Ok((Element::Void16, false)));
        assert_eq!(element("|V2"), Ok((Element::Void16, false)));
        for bad in ["<f8", "<i2", "|u1", "<V4", "<c8"] {
            assert!(element(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn formats_accept_only_exact_carriers() {
        assert!(Element::Float32.holds(&Binary32).is_ok());
        assert!(Element::Float16.holds(&Binary32).is_err());
        assert!(Element::Float16.holds(&Binary16).is_ok());
        assert!(Element::Bits16.holds(&Binary16).is_ok());
        // A float16 array would reinterpret bfloat16 patterns as other values.
        assert!(Element::Float16.holds(&Bfloat16).is_err());
        assert!(Element::Void16.holds(&Bfloat16).is_ok());
        assert!(Element::Void16.holds(&Binary16).is_err());
    }

    #[test]
    fn decoding_follows_the_byte_order() {
        // 1.0f32 is 0x3f800000 (IEEE 754-2019 binary32).
        assert_eq!(
            Element::Float32.decode(&[0, 0, 0x80, 0x3f], false),
            0x3f80_0000
        );
        assert_eq!(
            Element::Float32.decode(&[0x3f, 0x80, 0, 0], true),
            0x3f80_0000
        );
        assert_eq!(Element::Bits16.decode(&[0x00, 0x3c], false), 0x3c00);
    }
}
