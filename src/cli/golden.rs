//! `ulpgauge golden`: golden tables of every 16-bit and 8-bit reference (every input × every
//! function × forward and derivative × f16, bf16, and e4m3 and e5m2 in both OFP8 overflow
//! modes; default parameters, exact constants), gzip-compressed little-endian outputs in input
//! order (`.u16.gz`, `.u8.gz`).

use super::Failure;
use crate::activation::{catalog, Constants, Role};
use crate::format::{Bfloat16, Binary16, E4m3, E5m2, Format};
use crate::reference::{Evaluator, ParamRounding};
use flate2::{read::GzDecoder, write::GzEncoder, Compression};
use rayon::prelude::*;
use std::io::{Read, Write};
use std::path::{Path, PathBuf};

/// Arguments of `golden`.
#[derive(clap::Args, Debug)]
pub struct Args {
    /// Folder of the tables.
    #[arg(long, default_value = "tests/golden")]
    dir: PathBuf,
    /// Compare instead of writing; exit 1 on any difference.
    #[arg(long)]
    check: bool,
}

/// File name of one table.
pub fn table_path(dir: &Path, format: &dyn Format, function: &str, role: Role) -> PathBuf {
    let role = match role {
        Role::Forward => "forward",
        Role::Derivative => "derivative",
    };
    dir.join(format!(
        "{}-{function}-{role}.u{}.gz",
        format.name(),
        format.width()
    ))
}

/// Computes one table: the reference at every pattern of the evaluator's format.
pub fn compute_table(evaluator: &Evaluator) -> Result<Vec<u32>, String> {
    let count = evaluator.format().pattern_count() as u32;
    (0u32..count)
        .into_par_iter()
        .map(|x| {
            evaluator
                .reference(x)
                .map(|r| r.bits)
                .map_err(|e| e.to_string())
        })
        .collect()
}

/// Reads one table of a 16-bit or 8-bit format.
pub fn read_table(path: &Path, format: &dyn Format) -> Result<Vec<u32>, String> {
    let file = std::fs::File::open(path).map_err(|e| format!("{}: {e}", path.display()))?;
    let mut bytes = Vec::new();
    GzDecoder::new(file)
        .read_to_end(&mut bytes)
        .map_err(|e| format!("{}: {e}", path.display()))?;
    let width = format.width() as usize / 8;
    let expected = format.pattern_count() as usize * width;
    if bytes.len() != expected {
        return Err(format!(
            "{}: {} bytes, expected {expected}",
            path.display(),
            bytes.len()
        ));
    }
    Ok(bytes
        .chunks_exact(width)
        .map(|c| c.iter().rev().fold(0u32, |v, &b| v << 8 | b as u32))
        .collect())
}

fn write_table(path: &Path, table: &[u32], format: &dyn Format) -> Result<(), String> {
    let tmp = path.with_extension("tmp");
    let file = std::fs::File::create(&tmp).map_err(|e| format!("{}: {e}", tmp.display()))?;
    let mut encoder = GzEncoder::new(file, Compression::best());
    let width = format.width() as usize / 8;
    let bytes: Vec<u8> = table
        .iter()
        .flat_map(|v| v.to_le_bytes().into_iter().take(width))
        .collect();
    encoder
        .write_all(&bytes)
        .and_then(|_| encoder.finish().map(|_| ()))
        .map_err(|e| e.to_string())?;
    std::fs::rename(&tmp, path).map_err(|e| e.to_string())
}

/// Runs `golden`.
pub fn run(args: Args) -> Result<i32, Failure> {
    if !args.check {
        std::fs::create_dir_all(&args.dir)
            .map_err(|e| Failure::bad_input(format!("{}: {e}", args.dir.display())))?;
    }
    let formats: [&'static dyn Format; 6] = [
        &Binary16,
        &Bfloat16,
        &E4m3 { saturating: false },
        &E5m2 { saturating: false },
        &E4m3 { saturating: true },
        &E5m2 { saturating: true },
    ];
    let mut differences = 0usize;
    for format in formats {
        for function in catalog() {
            for role in [Role::Forward, Role::Derivative] {
                let constants = Constants::resolve(*function, &[], ParamRounding::Exact, format);
                let evaluator = Evaluator::new(*function, role, constants, format);
                let table = compute_table(&evaluator).map_err(|e| Failure {
                    code: 1,
                    message: e,
                })?;
                let path = table_path(&args.dir, format, function.name(), role);
                if args.check {
                    let golden = read_table(&path, format).map_err(Failure::bad_input)?;
                    let diff = golden.iter().zip(&table).filter(|(a, b)| a != b).count();
                    if diff > 0 {
                        let first = golden
                            .iter()
                            .zip(&table)
                            .position(|(a, b)| a != b)
                            .unwrap_or(0);
                        eprintln!(
                            "{}: {diff} differences, first at input {}",
                            path.display(),
                            crate::format::hex(format, first as u32)
                        );
                    }
                    differences += diff;
                } else {
                    write_table(&path, &table, format).map_err(Failure::bad_input)?;
                }
            }
        }
    }
    Ok(if differences > 0 { 1 } else { 0 })
}
