//! Model sizes: the named presets and the dimensions every other part reads.

use std::fmt;

/// Dimensions in the notation of the design: D model width, I inner width,
/// N state size, K conv width, R rank of the step projection.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct ModelDims {
    pub blocks: usize,
    pub d: usize,
    pub i: usize,
    pub n: usize,
    pub k: usize,
    pub r: usize,
    /// The output head is `byte_embed` itself (no `head` tensor).
    pub tied: bool,
}

/// Vocabulary: one entry per byte value.
pub const VOCAB: usize = 256;

/// rmsnorm epsilon of the design.
pub const NORM_EPS: f64 = 1e-5;

#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum Preset {
    /// 1 block, D=16, I=32, N=4, K=4, R=2 (tests)
    Tiny,
    /// 3 blocks, D=96, I=128, N=8, K=4, R=6 (the demo model)
    Small,
    /// 4 blocks, D=128, I=256, N=16, K=4, R=8
    Medium,
}

impl Preset {
    pub fn dims(self) -> ModelDims {
        let (blocks, d, i, n, k, r) = match self {
            Preset::Tiny => (1, 16, 32, 4, 4, 2),
            Preset::Small => (3, 96, 128, 8, 4, 6),
            Preset::Medium => (4, 128, 256, 16, 4, 8),
        };
        ModelDims {
            blocks,
            d,
            i,
            n,
            k,
            r,
            tied: true,
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Preset::Tiny => "tiny",
            Preset::Small => "small",
            Preset::Medium => "medium",
        }
    }
}

impl fmt::Display for Preset {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}
