//! One recorded .npy array, validated when opened and then read in chunks or at single
//! positions, never whole (an exhaustive binary32 set is 16 GiB per file).

use super::element::Element;
use crate::format::Format;
use npyz::{NpyHeader, Order};
use std::fs::File;
use std::io::{BufReader, Seek};
use std::os::unix::fs::FileExt;
use std::path::{Path, PathBuf};

/// A validated 1-D .npy array of bit patterns of one format.
#[derive(Debug)]
pub struct Column {
    /// The flag that named the file (`--inputs`, …), for messages.
    flag: &'static str,
    path: PathBuf,
    file: File,
    element: Element,
    big_endian: bool,
    data_offset: u64,
    len: u64,
}

impl Column {
    /// Opens and validates `path` as the array of `flag` for `format`: a .npy header, one
    /// dimension (C or Fortran order are the same there), an element that carries the format
    /// exactly, and exactly as many data bytes as the header announces.
    pub fn open(flag: &'static str, path: &Path, format: &dyn Format) -> Result<Column, String> {
        let at = || format!("{flag} {}", path.display());
        let file = File::open(path).map_err(|e| format!("{}: cannot open: {e}", at()))?;
        let size = file.metadata().map_err(|e| format!("{}: {e}", at()))?.len();
        let mut reader = BufReader::new(&file);
        let header = NpyHeader::from_reader(&mut reader).map_err(|e| {
            // The parser's message may quote the header over several lines.
            let e = e.to_string();
            let first = e.lines().next().unwrap_or("").trim_end();
            format!("{}: not a readable .npy file ({first})", at())
        })?;
        let data_offset = reader
            .stream_position()
            .map_err(|e| format!("{}: {e}", at()))?;
        drop(reader);
        if header.uses_pickled_array() {
            return Err(format!("{}: holds Python objects, not numbers", at()));
        }
        let (element, big_endian) =
            Element::of_dtype(&header.dtype()).map_err(|e| format!("{}: {e}", at()))?;
        element
            .holds(format)
            .map_err(|e| format!("{}: {e}", at()))?;
        let shape = header.shape();
        if shape.len() != 1 {
            let dims: Vec<String> = shape.iter().map(u64::to_string).collect();
            return Err(format!(
                "{}: expected a 1-D array, got shape ({}){}",
                at(),
                dims.join(", "),
                if header.order() == Order::Fortran {
                    " in Fortran order"
                } else {
                    ""
                }
            ));
        }
        let len = shape[0];
        if len == 0 {
            return Err(format!("{}: the array is empty", at()));
        }
        let expected = (len as u128) * element.size() as u128;
        let present = u128::from(size.saturating_sub(data_offset));
        if present < expected {
            return Err(format!(
                "{}: truncated: the header announces {len} elements ({expected} bytes) but only {present} bytes of data follow it",
                at()
            ));
        }
        if present > expected {
            return Err(format!(
                "{}: {} bytes follow the {len} elements the header announces: not a well-formed .npy file",
                at(),
                present - expected
            ));
        }
        Ok(Column {
            flag,
            path: path.to_path_buf(),
            file,
            element,
            big_endian,
            data_offset,
            len,
        })
    }

    /// Number of elements.
    pub fn len(&self) -> u64 {
        self.len
    }

    /// Whether the array is empty (never, once opened).
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// The file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The flag and file, for messages: "--outputs y.npy".
    pub fn name(&self) -> String {
        format!("{} {}", self.flag, self.path.display())
    }

    /// The element type, for reports.
    pub fn element(&self) -> Element {
        self.element
    }

    /// Reads the bit patterns at positions `from..from + n` into `out` (cleared first).
    pub fn read(&self, from: u64, n: usize, out: &mut Vec<u32>) -> Result<(), String> {
        out.clear();
        let n = n.min(self.len.saturating_sub(from) as usize);
        if n == 0 {
            return Ok(());
        }
        let size = self.element.size();
        let mut bytes = vec![0u8; n * size];
        self.file
            .read_exact_at(&mut bytes, self.data_offset + from * size as u64)
            .map_err(|e| format!("{}: read failed: {e}", self.name()))?;
        out.extend(
            bytes
                .chunks_exact(size)
                .map(|b| self.element.decode(b, self.big_endian)),
        );
        Ok(())
    }

    /// The bit pattern at position `index`.
    pub fn at(&self, index: u64) -> Result<u32, String> {
        let mut one = Vec::with_capacity(1);
        self.read(index, 1, &mut one)?;
        one.first()
            .copied()
            .ok_or_else(|| format!("{}: no element {index}", self.name()))
    }

    /// Every element in order, `chunk` at a time: `visit(first_index, patterns)`.
    pub fn for_each_chunk(
        &self,
        chunk: usize,
        mut visit: impl FnMut(u64, &[u32]) -> Result<(), String>,
    ) -> Result<(), String> {
        let mut buf = Vec::with_capacity(chunk);
        let mut from = 0;
        while from < self.len {
            self.read(from, chunk, &mut buf)?;
            visit(from, &buf)?;
            from += buf.len() as u64;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Bfloat16, Binary16, Binary32};
    use std::io::Write;

    fn temp(name: &str, bytes: &[u8]) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("ulpgauge-column-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join(name);
        std::fs::File::create(&path)
            .unwrap()
            .write_all(bytes)
            .unwrap();
        path
    }

    /// A version 1.0 .npy file as the format description (numpy.lib.format) lays it out: magic,
    /// version, little-endian header length, a dict literal padded with spaces and ended by a
    /// newline so that the data start at a multiple of 64 bytes, then the data.
    fn npy(descr: &str, fortran: bool, shape: &str, data: &[u8]) -> Vec<u8> {
        // A structured dtype is a list literal, a plain one a quoted string.
        let descr = if descr.starts_with('[') {
            descr.to_string()
        } else {
            format!("'{descr}'")
        };
        let mut dict = format!(
            "{{'descr': {descr}, 'fortran_order': {}, 'shape': {shape}, }}",
            if fortran { "True" } else { "False" }
        );
        while (10 + dict.len() + 1) % 64 != 0 {
            dict.push(' ');
        }
        dict.push('\n');
        let mut out = b"\x93NUMPY\x01\x00".to_vec();
        out.extend((dict.len() as u16).to_le_bytes());
        out.extend(dict.as_bytes());
        out.extend(data);
        out
    }

    #[test]
    fn reads_little_and_big_endian_in_both_orders() {
        let le: Vec<u8> = [1.0f32, -2.0, f32::INFINITY]
            .iter()
            .flat_map(|v| v.to_le_bytes())
            .collect();
        let be: Vec<u8> = [1.0f32, -2.0, f32::INFINITY]
            .iter()
            .flat_map(|v| v.to_be_bytes())
            .collect();
        for (name, bytes) in [
            ("c.npy", npy("<f4", false, "(3,)", &le)),
            ("f.npy", npy("<f4", true, "(3,)", &le)),
            ("be.npy", npy(">f4", false, "(3,)", &be)),
        ] {
            let c = Column::open("--inputs", &temp(name, &bytes), &Binary32).unwrap();
            let mut out = Vec::new();
            c.read(0, 10, &mut out).unwrap();
            // IEEE 754-2019 binary32 encodings of 1, −2 and +∞.
            assert_eq!(out, vec![0x3f80_0000, 0xc000_0000, 0x7f80_0000], "{name}");
            assert_eq!(c.at(1).unwrap(), 0xc000_0000);
        }
        let bf = npy("<V2", false, "(2,)", &[0x80, 0x3f, 0x00, 0xc0]);
        let c = Column::open("--outputs", &temp("bf.npy", &bf), &Bfloat16).unwrap();
        assert_eq!(c.at(0).unwrap(), 0x3f80);
        assert_eq!(c.at(1).unwrap(), 0xc000);
    }

    #[test]
    fn refuses_bad_files_with_one_line_naming_the_fault() {
        let ok = npy("<f2", false, "(2,)", &[0, 0x3c, 0, 0x40]);
        let cases: Vec<(&str, Vec<u8>, &str)> = vec![
            ("trunc.npy", ok[..ok.len() - 1].to_vec(), "truncated"),
            ("extra.npy", [ok.clone(), vec![0]].concat(), "bytes follow"),
            (
                "magic.npy",
                b"PK\x03\x04 not numpy".to_vec(),
                "not a readable .npy",
            ),
            ("short.npy", ok[..20].to_vec(), "not a readable .npy"),
            ("2d.npy", npy("<f2", true, "(1, 2)", &ok[128..]), "1-D"),
            ("empty.npy", npy("<f2", false, "(0,)", &[]), "empty"),
            ("f8.npy", npy("<f8", false, "(1,)", &[0; 8]), "dtype"),
            (
                "f4.npy",
                npy("<f4", false, "(1,)", &[0; 4]),
                "needs float16",
            ),
            (
                "rec.npy",
                npy("[('a', '<f2')]", false, "(1,)", &[0; 2]),
                "structured",
            ),
        ];
        for (name, bytes, what) in cases {
            let err = Column::open("--outputs", &temp(name, &bytes), &Binary16).unwrap_err();
            assert!(err.contains(what) && err.contains(name), "{name}: {err}");
            assert!(!err.contains('\n'), "{err}");
        }
        let err = Column::open("--inputs", Path::new("/nonexistent/x.npy"), &Binary16);
        assert!(err.unwrap_err().contains("cannot open"));
    }

    #[test]
    fn chunks_cover_every_element_once() {
        let data: Vec<u8> = (0u16..1000).flat_map(|v| v.to_le_bytes()).collect();
        let path = temp("chunks.npy", &npy("<u2", false, "(1000,)", &data));
        let c = Column::open("--inputs", &path, &Binary16).unwrap();
        let mut seen = Vec::new();
        c.for_each_chunk(64, |from, xs| {
            assert_eq!(from as usize, seen.len());
            seen.extend_from_slice(xs);
            Ok(())
        })
        .unwrap();
        assert_eq!(seen, (0u32..1000).collect::<Vec<_>>());
    }
}
