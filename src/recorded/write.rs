//! Writing a stream of bit patterns as a 1-D .npy array in the format's natural dtype, without
//! holding it: to a temporary file beside the target, renamed over it once complete.

use super::element::Element;
use crate::format::Format;
use npyz::{DType, WriterBuilder};
use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

/// The dtype recorded arrays of a format are written in: float32 and float16 as numbers,
/// bfloat16 as uint16 bit patterns (numpy has no bfloat16 dtype).
pub fn natural_element(format: &dyn Format) -> Element {
    match format.name() {
        "f32" => Element::Float32,
        "f16" => Element::Float16,
        _ => Element::Bits16,
    }
}

fn temporary(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    path.with_file_name(format!(".{name}.{}.tmp", std::process::id()))
}

/// Writes `len` patterns of `format` from `patterns` to `path` (little-endian, C order).
/// Either the whole file appears or none: a failure removes the temporary file.
pub fn write_patterns(
    path: &Path,
    format: &dyn Format,
    len: u64,
    patterns: impl Iterator<Item = u32>,
) -> Result<(), String> {
    let tmp = temporary(path);
    let result = write_to(&tmp, format, len, patterns).and_then(|_| {
        std::fs::rename(&tmp, path).map_err(|e| format!("cannot write {}: {e}", path.display()))
    });
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

fn write_to(
    tmp: &Path,
    format: &dyn Format,
    len: u64,
    patterns: impl Iterator<Item = u32>,
) -> Result<(), String> {
    let fail = |e: std::io::Error| format!("cannot write {}: {e}", tmp.display());
    let file = File::create(tmp).map_err(fail)?;
    let out = BufWriter::with_capacity(1 << 20, &file);
    match natural_element(format) {
        Element::Float32 => {
            let mut w = npyz::WriteOptions::<f32>::new()
                .dtype(DType::parse("'<f4'").map_err(fail)?)
                .shape(&[len])
                .writer(out)
                .begin_nd()
                .map_err(fail)?;
            for b in patterns {
                w.push(&f32::from_bits(b)).map_err(fail)?;
            }
            w.finish().map_err(fail)?;
        }
        Element::Float16 => {
            let mut w = npyz::WriteOptions::<half::f16>::new()
                .dtype(DType::parse("'<f2'").map_err(fail)?)
                .shape(&[len])
                .writer(out)
                .begin_nd()
                .map_err(fail)?;
            for b in patterns {
                w.push(&half::f16::from_bits(b as u16)).map_err(fail)?;
            }
            w.finish().map_err(fail)?;
        }
        _ => {
            let mut w = npyz::WriteOptions::<u16>::new()
                .dtype(DType::parse("'<u2'").map_err(fail)?)
                .shape(&[len])
                .writer(out)
                .begin_nd()
                .map_err(fail)?;
            for b in patterns {
                w.push(&(b as u16)).map_err(fail)?;
            }
            w.finish().map_err(fail)?;
        }
    }
    (&file).flush().map_err(fail)?;
    file.sync_all().map_err(fail)
}

#[cfg(test)]
mod tests {
    use super::super::column::Column;
    use super::*;
    use crate::format::{Bfloat16, Binary16, Binary32};

    #[test]
    fn written_files_read_back_bit_for_bit() {
        let dir = std::env::temp_dir().join(format!("ulpgauge-npywrite-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        // NaN payloads and signalling NaNs must survive (IEEE 754-2019 §6.2: a copy keeps them).
        let cases: [(&'static dyn Format, Vec<u32>); 3] = [
            (
                &Binary32,
                vec![0x7f80_0001, 0xffc0_1234, 0x8000_0000, 1, 0x3f80_0000],
            ),
            (&Binary16, vec![0x7c01, 0xfe00, 0x8000, 0x0001, 0x3c00]),
            (&Bfloat16, vec![0x7f81, 0xffc0, 0x8000, 0x0001, 0x3f80]),
        ];
        for (format, patterns) in cases {
            let path = dir.join(format!("{}.npy", format.name()));
            write_patterns(
                &path,
                format,
                patterns.len() as u64,
                patterns.iter().copied(),
            )
            .unwrap();
            let c = Column::open("--inputs", &path, format).unwrap();
            assert_eq!(c.element(), natural_element(format));
            let mut back = Vec::new();
            c.read(0, 100, &mut back).unwrap();
            assert_eq!(back, patterns, "{}", format.name());
        }
        // A count that disagrees with the stream leaves no file behind.
        let path = dir.join("short.npy");
        assert!(write_patterns(&path, &Binary16, 3, [1u32].into_iter()).is_err());
        assert!(!path.exists());
    }
}
