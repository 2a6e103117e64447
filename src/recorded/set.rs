//! A recorded set as the check sees it: validated, surveyed, and answering for the inputs it
//! holds (and for no other).

use super::files::RecordedFiles;
use super::sorted::{Sorted, IN_MEMORY};
use super::streamed::Streamed;
use super::survey::Survey;
use super::table::Table;
use crate::format::Format;
use crate::report::model::RecordedFile;
use crate::sweep::{InputRange, Inputs};
use std::path::{Path, PathBuf};

enum Store {
    Table(Table),
    Sorted(Sorted),
    Streamed(Box<Streamed>),
}

/// A recorded set of (x, ŷ[, g]) elements of one format.
pub struct Recorded {
    format: &'static dyn Format,
    survey: Survey,
    paths: [Option<PathBuf>; 3],
    dtypes: [Option<&'static str>; 3],
    store: Store,
}

/// The files a recorded set was read from.
#[derive(Clone, Debug)]
pub struct RecordedPaths<'a> {
    /// `--inputs`.
    pub inputs: &'a Path,
    /// `--outputs`.
    pub outputs: &'a Path,
    /// `--grads`, for gradient roles.
    pub grads: Option<&'a Path>,
}

impl Recorded {
    /// Opens, validates and surveys a set; every problem with the files is one line of error.
    /// Inputs outside `range` are kept out of the measured inputs.
    pub fn open(
        paths: &RecordedPaths,
        format: &'static dyn Format,
        range: &InputRange,
    ) -> Result<Recorded, String> {
        let files = RecordedFiles::open(paths.inputs, paths.outputs, paths.grads, format)?;
        let dtypes = [
            Some(files.inputs.element().describe()),
            Some(files.outputs.element().describe()),
            files.grads.as_ref().map(|g| g.element().describe()),
        ];
        let (store, survey) = if format.width() <= 16 {
            let (t, s) = Table::load(&files, format, range)?;
            (Store::Table(t), s)
        } else if files.len() <= IN_MEMORY {
            let (t, s) = Sorted::load(&files, format, range)?;
            (Store::Sorted(t), s)
        } else {
            let (t, s) = Streamed::load(files, format, range)?;
            (Store::Streamed(Box::new(t)), s)
        };
        Ok(Recorded {
            format,
            survey,
            paths: [
                Some(paths.inputs.to_path_buf()),
                Some(paths.outputs.to_path_buf()),
                paths.grads.map(Path::to_path_buf),
            ],
            dtypes,
            store,
        })
    }

    /// What the survey found.
    pub fn survey(&self) -> &Survey {
        &self.survey
    }

    /// The measured inputs: the distinct recorded inputs inside the range, in bit order.
    pub fn measured(&self) -> Result<&Inputs, String> {
        self.survey.inputs.as_ref().ok_or_else(|| {
            format!(
                "the {} recorded inputs form more than {} separate runs of consecutive patterns: split the set into parts (`ulpgauge inputs --shard`, then `check --shard` and `merge`)",
                self.survey.distinct,
                super::survey::MAX_RUNS
            )
        })
    }

    /// The first recorded output and g of `x`, or `None` when `x` was not recorded.
    pub fn get(&mut self, x: u32) -> Result<Option<(u32, Option<u32>)>, String> {
        match &mut self.store {
            Store::Table(t) => Ok(t.get(x)),
            Store::Sorted(s) => Ok(s.get(x)),
            Store::Streamed(s) => s.get(x),
        }
    }

    /// Whether `x` was recorded.
    pub fn contains(&mut self, x: u32) -> Result<bool, String> {
        Ok(self.get(x)?.is_some())
    }

    /// The arrays, for the report.
    pub fn files(&self) -> Vec<RecordedFile> {
        ["inputs", "outputs", "grads"]
            .iter()
            .zip(&self.paths)
            .zip(&self.dtypes)
            .filter_map(|((array, path), dtype)| {
                Some(RecordedFile {
                    array: array.to_string(),
                    path: path.as_ref()?.display().to_string(),
                    dtype: dtype.unwrap_or_default().to_string(),
                })
            })
            .collect()
    }

    /// The format of the set.
    pub fn format(&self) -> &'static dyn Format {
        self.format
    }

    /// Moves the measured inputs out (for the check's plan); [`Self::measured`] fails after.
    pub fn take_measured(&mut self) -> Result<Inputs, String> {
        self.measured()?;
        Ok(self.survey.inputs.take().expect("checked"))
    }
}

#[cfg(test)]
mod tests {
    use super::super::write::write_patterns;
    use super::*;
    use crate::format::{Binary16, Binary32};
    use crate::sweep::Rng;
    use std::collections::HashMap;

    fn dir() -> PathBuf {
        let d = std::env::temp_dir().join(format!("ulpgauge-recset-{}", std::process::id()));
        std::fs::create_dir_all(&d).unwrap();
        d
    }

    fn save(name: &str, format: &'static dyn Format, v: &[u32]) -> PathBuf {
        let p = dir().join(name);
        write_patterns(&p, format, v.len() as u64, v.iter().copied()).unwrap();
        p
    }

    /// A set with repeats (some disagreeing) in the given order, and its model: the first
    /// output of each input.
    fn sample(format: &'static dyn Format, n: usize, sorted: bool) -> (Vec<u32>, Vec<u32>) {
        let mut rng = Rng::new(11);
        let mask = if format.width() == 16 {
            0xffff
        } else {
            u32::MAX
        };
        // Finite inputs only: a random pattern may be a NaN, which is fine, but keep the
        // outputs finite so that nothing looks unfilled.
        let mut xs: Vec<u32> = (0..n)
            .map(|_| rng.next_u64() as u32 & mask & !0x4000_4000)
            .collect();
        for i in (0..n).step_by(7) {
            xs[i] = xs[i / 2];
        }
        if sorted {
            xs.sort_unstable();
        }
        let ys = xs
            .iter()
            .enumerate()
            .map(|(i, &x)| if i % 13 == 0 { x ^ 1 } else { x })
            .map(|y| y & !0x4000_4000)
            .collect();
        (xs, ys)
    }

    fn model(xs: &[u32], ys: &[u32]) -> HashMap<u32, u32> {
        let mut m = HashMap::new();
        for (&x, &y) in xs.iter().zip(ys) {
            m.entry(x).or_insert(y);
        }
        m
    }

    fn check_store(mut get: impl FnMut(u32) -> Option<u32>, xs: &[u32], ys: &[u32]) {
        let m = model(xs, ys);
        // Every recorded input in file order, then in reverse (jumps), then absent ones.
        for &x in xs.iter().chain(xs.iter().rev()) {
            assert_eq!(get(x), m.get(&x).copied(), "{x:#x}");
        }
        for x in xs.iter().map(|x| x.wrapping_add(1)) {
            assert_eq!(get(x), m.get(&x).copied(), "{x:#x}");
        }
    }

    #[test]
    fn every_store_answers_with_the_first_recorded_output() {
        for (format, n, sorted) in [
            (&Binary16 as &'static dyn Format, 3000, false),
            (&Binary32, 5000, false),
            (&Binary32, 5000, true),
        ] {
            let (xs, ys) = sample(format, n, sorted);
            let paths = RecordedPaths {
                inputs: &save("x.npy", format, &xs),
                outputs: &save("y.npy", format, &ys),
                grads: None,
            };
            let mut r = Recorded::open(&paths, format, &InputRange::all(format)).unwrap();
            let m = model(&xs, &ys);
            let s = r.survey().clone();
            assert_eq!(s.distinct, m.len() as u64);
            assert_eq!(s.repeats, (n - m.len()) as u64);
            assert_eq!(s.in_bit_order, sorted);
            assert!(!s.exhaustive);
            assert!(s.disagreeing > 0);
            assert_eq!(r.measured().unwrap().len(), m.len() as u64);
            check_store(|x| r.get(x).unwrap().map(|a| a.0), &xs, &ys);
        }
    }

    #[test]
    fn the_disk_store_walks_windows_and_refuses_unsorted_sets() {
        let f = &Binary32;
        let (xs, ys) = sample(f, 20_000, true);
        let files =
            RecordedFiles::open(&save("sx.npy", f, &xs), &save("sy.npy", f, &ys), None, f).unwrap();
        let (mut s, survey) = Streamed::load(files, f, &InputRange::all(f)).unwrap();
        assert_eq!(survey.distinct, model(&xs, &ys).len() as u64);
        check_store(|x| s.get(x).unwrap().map(|a| a.0), &xs, &ys);

        let (ux, uy) = sample(f, 2000, false);
        let files =
            RecordedFiles::open(&save("ux.npy", f, &ux), &save("uy.npy", f, &uy), None, f).unwrap();
        let err = Streamed::load(files, f, &InputRange::all(f)).err().unwrap();
        assert!(err.contains("increasing bit order"), "{err}");
    }

    #[test]
    fn every_pattern_in_any_order_is_exhaustive() {
        let f = &Binary16;
        // A permutation of all 65,536 patterns (multiplying by an odd number mod 2^16).
        let xs: Vec<u32> = (0u32..1 << 16).map(|i| (i * 40503) & 0xffff).collect();
        let ys: Vec<u32> = xs.iter().map(|_| 0x3c00).collect();
        let paths = RecordedPaths {
            inputs: &save("px.npy", f, &xs),
            outputs: &save("py.npy", f, &ys),
            grads: None,
        };
        let r = Recorded::open(&paths, f, &InputRange::all(f)).unwrap();
        assert!(r.survey().exhaustive && !r.survey().in_bit_order);
        assert_eq!(r.measured().unwrap().runs(), &[(0, 0xffff)]);
        // The same set over [1, 2) is exhaustive there, the rest outside.
        let r = Recorded::open(&paths, f, &InputRange::parse(f, "1,2").unwrap()).unwrap();
        assert!(r.survey().exhaustive);
        assert_eq!(r.survey().outside_range, 65536 - 1024);
    }

    #[test]
    fn lengths_must_agree() {
        let f = &Binary16;
        let paths = RecordedPaths {
            inputs: &save("lx.npy", f, &[0x3c00, 0x4000]),
            outputs: &save("ly.npy", f, &[0x3c00]),
            grads: None,
        };
        let err = Recorded::open(&paths, f, &InputRange::all(f))
            .err()
            .unwrap();
        assert!(err.contains("holds 1 elements but --inputs"), "{err}");
    }
}
