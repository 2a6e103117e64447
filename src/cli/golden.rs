//! `ulpgauge golden`: golden tables of every 16-bit reference (all 65,536 inputs × every
//! function × forward and derivative × f16 and bf16, default parameters, exact constants),
//! gzip-compressed little-endian u16 outputs in input order.

use super::Failure;
use crate::activation::{catalog, Constants, Role};
use crate::format::{Bfloat16, Binary16, Format};
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
    dir.join(format!("{}-{function}-{role}.u16.gz", format.name()))
}

/// Computes one table.
pub fn compute_table(evaluator: &Evaluator) -> Result<Vec<u16>, String> {
    (0u32..65536)
        .into_par_iter()
        .map(|x| {
            evaluator
                .reference(x)
                .map(|r| r.bits as u16)
                .map_err(|e| e.to_string())
        })
        .collect()
}

/// Reads one table.
pub fn read_table(path: &Path) -> Result<Vec<u16>, String> {
    let file = std::fs::File::open(path).map_err(|e| format!("{}: {e}", path.display()))?;
    let mut bytes = Vec::new();
    GzDecoder::new(file)
        .read_to_end(&mut bytes)
        .map_err(|e| format!("{}: {e}", path.display()))?;
    if bytes.len() != 131072 {
        return Err(format!(
            "{}: {} bytes, expected 131072",
            path.display(),
            bytes.len()
        ));
    }
    Ok(bytes
        .chunks_exact(2)
        .map(|c| u16::from_le_bytes([c[0], c[1]]))
        .collect())
}

fn write_table(path: &Path, table: &[u16]) -> Result<(), String> {
    let tmp = path.with_extension("tmp");
    let file = std::fs::File::create(&tmp).map_err(|e| format!("{}: {e}", tmp.display()))?;
    let mut encoder = GzEncoder::new(file, Compression::best());
    let bytes: Vec<u8> = table.iter().flat_map(|v| v.to_le_bytes()).collect();
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
    let formats: [&'static dyn Format; 2] = [&Binary16, &Bfloat16];
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
                    let golden = read_table(&path).map_err(Failure::bad_input)?;
                    let diff = golden.iter().zip(&table).filter(|(a, b)| a != b).count();
                    if diff > 0 {
                        let first = golden
                            .iter()
                            .zip(&table)
                            .position(|(a, b)| a != b)
                            .unwrap_or(0);
                        eprintln!(
                            "{}: {diff} differences, first at input 0x{first:04x}",
                            path.display()
                        );
                    }
                    differences += diff;
                } else {
                    write_table(&path, &table).map_err(Failure::bad_input)?;
                }
            }
        }
    }
    Ok(if differences > 0 { 1 } else { 0 })
}
