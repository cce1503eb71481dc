//! Corpora as raw bytes: the training part and the held-out tail of each file,
//! random training windows, and a fixed, bounded set of held-out windows.

use std::path::PathBuf;

use rand::Rng;

use super::error::TrainError;

/// A byte range of one corpus file.
#[derive(Clone, Debug)]
struct Segment {
    file: usize,
    start: usize,
    end: usize,
}

pub struct Corpus {
    files: Vec<Vec<u8>>,
    train: Vec<Segment>,
    holdout: Vec<Segment>,
}

impl Corpus {
    /// Reads every file; the last `holdout` fraction of EACH file is held out.
    pub fn load(paths: &[PathBuf], holdout: f64) -> Result<Self, TrainError> {
        let files = paths
            .iter()
            .map(|p| {
                std::fs::read(p).map_err(|source| TrainError::ReadCorpus {
                    path: p.clone(),
                    source,
                })
            })
            .collect::<Result<Vec<_>, _>>()?;
        Self::from_files(files, holdout)
    }

    pub fn from_files(files: Vec<Vec<u8>>, holdout: f64) -> Result<Self, TrainError> {
        if !(0.0..1.0).contains(&holdout) {
            return Err(TrainError::InvalidOption {
                option: "--holdout",
                reason: format!("{holdout} is not a fraction in [0, 1)"),
            });
        }
        let mut train = Vec::new();
        let mut held = Vec::new();
        for (file, bytes) in files.iter().enumerate() {
            let cut = bytes.len() - (bytes.len() as f64 * holdout).floor() as usize;
            train.push(Segment {
                file,
                start: 0,
                end: cut,
            });
            if cut < bytes.len() {
                held.push(Segment {
                    file,
                    start: cut,
                    end: bytes.len(),
                });
            }
        }
        Ok(Corpus {
            files,
            train,
            holdout: held,
        })
    }

    pub fn train_bytes(&self) -> usize {
        self.train.iter().map(|s| s.end - s.start).sum()
    }

    pub fn holdout_bytes(&self) -> usize {
        self.holdout.iter().map(|s| s.end - s.start).sum()
    }

    fn bytes(&self, s: &Segment) -> &[u8] {
        &self.files[s.file][s.start..s.end]
    }

    /// `batch` windows of `window` bytes at uniformly random positions of the
    /// training part (every start position of every file equally likely);
    /// windows never cross from one file into the next.
    pub fn sample_windows(
        &self,
        rng: &mut impl Rng,
        batch: usize,
        window: usize,
    ) -> Result<Vec<&[u8]>, TrainError> {
        let mut cumulative = Vec::with_capacity(self.train.len());
        let mut total = 0usize;
        for s in &self.train {
            total += (s.end - s.start + 1).saturating_sub(window);
            cumulative.push(total);
        }
        if total == 0 {
            return Err(TrainError::CorpusTooShort { needed: window });
        }
        Ok((0..batch)
            .map(|_| {
                let pick = rng.random_range(0..total);
                let seg = cumulative.partition_point(|&c| c <= pick);
                let before = if seg == 0 { 0 } else { cumulative[seg - 1] };
                let start = pick - before;
                &self.bytes(&self.train[seg])[start..start + window]
            })
            .collect())
    }

    /// Consecutive held-out windows of `window` bytes (a shorter last one per file
    /// if it has at least 2 bytes), thinned evenly to at most `max_windows`.
    pub fn holdout_windows(&self, window: usize, max_windows: usize) -> Vec<&[u8]> {
        let all: Vec<&[u8]> = self
            .holdout
            .iter()
            .flat_map(|s| self.bytes(s).chunks(window))
            .filter(|w| w.len() >= 2)
            .collect();
        if all.len() <= max_windows {
            return all;
        }
        (0..max_windows)
            .map(|k| all[k * all.len() / max_windows])
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    #[test]
    fn holdout_is_the_tail_of_each_file_and_windows_stay_inside() {
        let a: Vec<u8> = (0..100u8).collect();
        let b: Vec<u8> = (100..200u8).collect();
        let c = Corpus::from_files(vec![a, b], 0.1).unwrap();
        assert_eq!(c.train_bytes(), 180);
        assert_eq!(c.holdout_bytes(), 20);
        let held = c.holdout_windows(8, 100);
        assert_eq!(held[0], &[90, 91, 92, 93, 94, 95, 96, 97][..]);
        assert_eq!(held.len(), 4); // 8 + 2 bytes of each file's tail
        let mut rng = rand::rngs::StdRng::seed_from_u64(3);
        for w in c.sample_windows(&mut rng, 500, 16).unwrap() {
            // consecutive bytes of one file's training part
            assert!(w.windows(2).all(|p| p[1] == p[0] + 1), "{w:?}");
            assert!(w.iter().all(|&v| v < 90 || (100..190).contains(&v)));
        }
        assert!(c.sample_windows(&mut rng, 1, 91).is_err());
    }
}
