//! The arrays of one recorded set (inputs, outputs and, for gradient roles, g), opened
//! together and read in lockstep.

use super::column::Column;
use crate::format::Format;
use std::path::Path;

/// Elements read per chunk (4 MiB per binary32 array).
pub const CHUNK: usize = 1 << 20;

/// The validated arrays of one recorded set, all of the same length.
#[derive(Debug)]
pub struct RecordedFiles {
    /// x.
    pub inputs: Column,
    /// ŷ.
    pub outputs: Column,
    /// g, for gradient roles.
    pub grads: Option<Column>,
}

impl RecordedFiles {
    /// Opens and validates every file; their lengths must agree.
    pub fn open(
        inputs: &Path,
        outputs: &Path,
        grads: Option<&Path>,
        format: &dyn Format,
    ) -> Result<RecordedFiles, String> {
        let inputs = Column::open("--inputs", inputs, format)?;
        let outputs = Column::open("--outputs", outputs, format)?;
        let grads = grads
            .map(|g| Column::open("--grads", g, format))
            .transpose()?;
        for other in std::iter::once(&outputs).chain(&grads) {
            if other.len() != inputs.len() {
                return Err(format!(
                    "{} holds {} elements but {} holds {}: one output per input",
                    other.name(),
                    other.len(),
                    inputs.name(),
                    inputs.len()
                ));
            }
        }
        Ok(RecordedFiles {
            inputs,
            outputs,
            grads,
        })
    }

    /// Number of elements in each file.
    pub fn len(&self) -> u64 {
        self.inputs.len()
    }

    /// Whether the set is empty (never, once opened).
    pub fn is_empty(&self) -> bool {
        self.inputs.is_empty()
    }

    /// Reads positions `from..from + n` of every file (`gs` stays empty without g).
    pub fn read(
        &self,
        from: u64,
        n: usize,
        xs: &mut Vec<u32>,
        ys: &mut Vec<u32>,
        gs: &mut Vec<u32>,
    ) -> Result<(), String> {
        self.inputs.read(from, n, xs)?;
        self.outputs.read(from, n, ys)?;
        gs.clear();
        if let Some(g) = &self.grads {
            g.read(from, n, gs)?;
        }
        Ok(())
    }

    /// Every element in file order, a chunk at a time: `visit(xs, ys, gs)`, `gs` empty
    /// without g.
    pub fn for_each_chunk(
        &self,
        mut visit: impl FnMut(&[u32], &[u32], &[u32]) -> Result<(), String>,
    ) -> Result<(), String> {
        let (mut xs, mut ys, mut gs) = (Vec::new(), Vec::new(), Vec::new());
        let mut from = 0;
        while from < self.len() {
            self.read(from, CHUNK, &mut xs, &mut ys, &mut gs)?;
            visit(&xs, &ys, &gs)?;
            from += xs.len() as u64;
        }
        Ok(())
    }
}
