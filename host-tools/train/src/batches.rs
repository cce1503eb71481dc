//! Corpora as raw bytes: the training part and the held-out tail of each file,
//! random training windows drawn with a weight per file, and a fixed, bounded set of
//! held-out windows.

use std::path::PathBuf;

use rand::Rng;

use crate::error::TrainError;

/// A byte range of one corpus file.
#[derive(Clone, Debug)]
struct Segment {
    file: usize,
    start: usize,
    end: usize,
}

/// One corpus file and how often its bytes are drawn relative to other files' bytes.
#[derive(Clone, Debug, PartialEq)]
pub struct CorpusFile {
    pub path: PathBuf,
    pub weight: f64,
}

impl CorpusFile {
    /// `PATH` (weight 1) or `PATH@WEIGHT`, e.g. `data/scenario/train.txt@3`: each byte of
    /// that file is drawn three times as often as a byte of a weight-1 file. A path that
    /// exists as written is taken whole, even if it contains `@`.
    pub fn parse(arg: &str) -> Result<Self, String> {
        if let Some((path, weight)) = arg.rsplit_once('@') {
            if !std::path::Path::new(arg).exists() {
                let weight: f64 = weight
                    .parse()
                    .map_err(|_| format!("`{arg}`: the weight after @ is not a number"))?;
                if !(weight > 0.0 && weight.is_finite()) {
                    return Err(format!("`{arg}`: the weight must be a positive number"));
                }
                return Ok(CorpusFile {
                    path: path.into(),
                    weight,
                });
            }
        }
        Ok(CorpusFile {
            path: arg.into(),
            weight: 1.0,
        })
    }
}

/// How much of each file is held out: a fraction, but at least a floor in bytes (never
/// more than half the file), so a small corpus still has a held-out part worth measuring.
#[derive(Clone, Copy, Debug)]
pub struct Holdout {
    pub fraction: f64,
    pub min_bytes: usize,
}

impl Holdout {
    fn bytes_of(self, len: usize) -> usize {
        ((len as f64 * self.fraction).floor() as usize)
            .max(self.min_bytes)
            .min(len / 2)
    }
}

pub struct Corpus {
    files: Vec<Vec<u8>>,
    weights: Vec<f64>,
    train: Vec<Segment>,
    holdout: Vec<Segment>,
}

impl Corpus {
    /// Reads every file; the tail of EACH file is held out (see [`Holdout`]).
    pub fn load(files: &[CorpusFile], holdout: Holdout) -> Result<Self, TrainError> {
        let bytes = files
            .iter()
            .map(|f| {
                std::fs::read(&f.path).map_err(|source| TrainError::ReadCorpus {
                    path: f.path.clone(),
                    source,
                })
            })
            .collect::<Result<Vec<_>, _>>()?;
        let weights = files.iter().map(|f| f.weight).collect();
        Self::from_files(bytes, weights, holdout)
    }

    /// Files with weight 1 each and no floor on the held-out part.
    pub fn unweighted(files: Vec<Vec<u8>>, fraction: f64) -> Result<Self, TrainError> {
        let weights = vec![1.0; files.len()];
        let holdout = Holdout {
            fraction,
            min_bytes: 0,
        };
        Self::from_files(files, weights, holdout)
    }

    pub fn from_files(
        files: Vec<Vec<u8>>,
        weights: Vec<f64>,
        holdout: Holdout,
    ) -> Result<Self, TrainError> {
        if !(0.0..1.0).contains(&holdout.fraction) {
            return Err(TrainError::InvalidOption {
                option: "--holdout",
                reason: format!("{} is not a fraction in [0, 1)", holdout.fraction),
            });
        }
        let mut train = Vec::new();
        let mut held = Vec::new();
        for (file, bytes) in files.iter().enumerate() {
            let cut = bytes.len() - holdout.bytes_of(bytes.len());
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
            weights,
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

    /// `batch` windows of `window` bytes at random positions of the training part:
    /// a file is chosen with probability proportional to its start positions times its
    /// weight, then a start position in it uniformly; windows never cross from one file
    /// into the next.
    pub fn sample_windows(
        &self,
        rng: &mut impl Rng,
        batch: usize,
        window: usize,
    ) -> Result<Vec<&[u8]>, TrainError> {
        let mut cumulative = Vec::with_capacity(self.train.len());
        let mut total = 0.0f64;
        for s in &self.train {
            let starts = (s.end - s.start + 1).saturating_sub(window);
            total += starts as f64 * self.weights[s.file];
            cumulative.push(total);
        }
        if total == 0.0 {
            return Err(TrainError::CorpusTooShort { needed: window });
        }
        Ok((0..batch)
            .map(|_| {
                let pick = rng.random::<f64>() * total;
                let seg = cumulative
                    .partition_point(|&c| c <= pick)
                    .min(self.train.len() - 1);
                let s = &self.train[seg];
                let starts = (s.end - s.start + 1).saturating_sub(window);
                let start = rng.random_range(0..starts.max(1));
                &self.bytes(s)[start..start + window]
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
        let c = Corpus::unweighted(vec![a, b], 0.1).unwrap();
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

#[cfg(test)]
mod weight_tests {
    use super::*;
    use rand::SeedableRng;

    #[test]
    fn weights_set_how_often_each_file_is_drawn() {
        // Two files of equal length, weights 1 and 3: a quarter of the windows should
        // come from the first (binomial, 4,000 draws: σ ≈ 27, the bound is 4σ).
        let c = Corpus::from_files(
            vec![vec![1u8; 1000], vec![2u8; 1000]],
            vec![1.0, 3.0],
            Holdout {
                fraction: 0.0,
                min_bytes: 0,
            },
        )
        .unwrap();
        let mut rng = rand::rngs::StdRng::seed_from_u64(9);
        let first = c
            .sample_windows(&mut rng, 4000, 8)
            .unwrap()
            .iter()
            .filter(|w| w[0] == 1)
            .count();
        assert!((1000i64 - first as i64).abs() < 110, "{first} of 4000");
    }

    #[test]
    fn holdout_has_a_floor_in_bytes_and_never_takes_more_than_half() {
        let h = Holdout {
            fraction: 0.01,
            min_bytes: 2048,
        };
        assert_eq!(h.bytes_of(9000), 2048);
        assert_eq!(h.bytes_of(1_000_000), 10_000);
        assert_eq!(h.bytes_of(3000), 1500);
    }

    #[test]
    fn weight_after_at_sign() {
        let f = CorpusFile::parse("no/such/file.txt@2.5").unwrap();
        assert_eq!((f.path, f.weight), ("no/such/file.txt".into(), 2.5));
        assert!(CorpusFile::parse("no/such/file.txt@0").is_err());
        assert!(CorpusFile::parse("no/such/file.txt@x").is_err());
        assert_eq!(CorpusFile::parse("plain.txt").unwrap().weight, 1.0);
    }
}
