//! `ulpgauge worker` (hidden): the process the kernel runs in.  Started by the runner with the
//! library, symbol and calling convention; speaks the binary protocol on stdin/stdout.

use super::Failure;
use crate::kernel::abi::Abi;
use crate::kernel::worker::{serve, WorkerConfig};
use std::path::PathBuf;

/// Arguments of `worker`, written by the runner.
#[derive(clap::Args, Debug)]
pub struct Args {
    /// The shared library.
    #[arg(long)]
    library: PathBuf,
    /// The kernel symbol.
    #[arg(long)]
    symbol: String,
    /// Bytes per input element (4, 2 or 1).
    #[arg(long)]
    elem_bytes: usize,
    /// Bytes per output element (default: --elem-bytes).
    #[arg(long)]
    out_bytes: Option<usize>,
    /// The kernel takes (x, g, dx, n).
    #[arg(long)]
    gradient: bool,
    /// The kernel takes (x, sx, y, sy, n).
    #[arg(long)]
    strided: bool,
    /// A trailing float argument, as the hex of its bits (exact), repeatable.
    #[arg(long)]
    trailing: Vec<String>,
    /// The runner's pid: the worker ends its process group when this parent is gone.
    #[arg(long)]
    parent: Option<i32>,
    /// The caller's FP control word in hex, set before loading and before every call.
    #[arg(long)]
    fpenv: Option<String>,
}

/// Serves the runner until it closes the pipe.
pub fn run(args: Args) -> Result<i32, Failure> {
    let out_bytes = args.out_bytes.unwrap_or(args.elem_bytes);
    if ![1, 2, 4].contains(&args.elem_bytes) || ![1, 2, 4].contains(&out_bytes) {
        return Err(Failure::bad_input(
            "--elem-bytes and --out-bytes must be 1, 2 or 4",
        ));
    }
    let trailing = args
        .trailing
        .iter()
        .map(|t| u32::from_str_radix(t, 16).map(f32::from_bits))
        .collect::<Result<Vec<f32>, _>>()
        .map_err(|_| Failure::bad_input("--trailing takes the hex bits of a float"))?;
    let fpenv = args
        .fpenv
        .as_deref()
        .map(|w| u32::from_str_radix(w, 16))
        .transpose()
        .map_err(|_| Failure::bad_input("--fpenv takes the hex of a control word"))?;
    Ok(serve(WorkerConfig {
        library: args.library,
        symbol: args.symbol,
        abi: Abi {
            elem_bytes: args.elem_bytes,
            out_bytes,
            gradient: args.gradient,
            trailing,
            strided: args.strided,
        },
        parent: args.parent,
        fpenv,
    }))
}
