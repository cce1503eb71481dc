//! Shapes of the random checkpoints the reference tests run on.

use std::fmt;

use crate::run_seed::SplitMix64;

/// Storage type of the checkpoint's tensors.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Dtype {
    /// IEEE 754 binary32.
    F32,
    /// IEEE 754 binary16.
    F16,
    /// bfloat16.
    Bf16,
}

impl Dtype {
    /// The safetensors dtype string.
    pub fn name(self) -> &'static str {
        match self {
            Dtype::F32 => "F32",
            Dtype::F16 => "F16",
            Dtype::Bf16 => "BF16",
        }
    }
}

/// One random checkpoint: dimensions (names as in the design's schema), head, dtype and seed.
#[derive(Clone, Copy, Debug)]
pub struct CheckpointSpec {
    /// Model width D.
    pub d: usize,
    /// Inner width I.
    pub i: usize,
    /// State size N.
    pub n: usize,
    /// Conv kernel K.
    pub k: usize,
    /// Step rank R.
    pub r: usize,
    /// Number of blocks.
    pub blocks: usize,
    /// Head tied to the byte embedding (no `head` tensor).
    pub tied: bool,
    /// Storage type.
    pub dtype: Dtype,
    /// Seed of the values.
    pub seed: u64,
}

impl CheckpointSpec {
    /// Arguments of `make_checkpoint.py` for this shape (output options not included).
    pub fn script_args(&self) -> Vec<String> {
        let mut args = Vec::new();
        for (flag, value) in [
            ("--d", self.d),
            ("--i", self.i),
            ("--n", self.n),
            ("--k", self.k),
            ("--r", self.r),
            ("--blocks", self.blocks),
        ] {
            args.push(flag.to_string());
            args.push(value.to_string());
        }
        args.push("--head".into());
        args.push(if self.tied { "tied" } else { "untied" }.into());
        args.push("--dtype".into());
        args.push(self.dtype.name().into());
        args.push("--seed".into());
        args.push(self.seed.to_string());
        args
    }
}

impl fmt::Display for CheckpointSpec {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "D={} I={} N={} K={} R={} blocks={} {} {} seed={}",
            self.d,
            self.i,
            self.n,
            self.k,
            self.r,
            self.blocks,
            if self.tied { "tied" } else { "untied" },
            self.dtype.name(),
            self.seed
        )
    }
}

/// Fixed shapes covering odd and even widths, one to three blocks, every kernel from 2 to 4 plus
/// one of 5, tied and untied heads and the three dtypes, followed by one shape drawn at random
/// from the run's seed. Shape `j` gets the values seed `base_seed + j`.
pub fn test_shapes(base_seed: u64) -> Vec<CheckpointSpec> {
    use Dtype::{Bf16, F16, F32};
    let fixed = [
        (24, 40, 8, 3, 2, 2, true, F32),
        (32, 64, 16, 4, 2, 1, false, F16),
        (48, 96, 16, 4, 3, 3, false, Bf16),
        (64, 128, 16, 4, 4, 2, true, Bf16),
        (16, 24, 4, 2, 1, 1, false, F32),
        (40, 72, 12, 3, 3, 2, false, F16),
        (20, 36, 5, 5, 2, 2, true, F16),
        (64, 96, 8, 4, 4, 2, false, F32),
    ];
    let mut shapes: Vec<CheckpointSpec> = fixed
        .iter()
        .zip(base_seed..)
        .map(
            |(&(d, i, n, k, r, blocks, tied, dtype), seed)| CheckpointSpec {
                d,
                i,
                n,
                k,
                r,
                blocks,
                tied,
                dtype,
                seed,
            },
        )
        .collect();
    let seed = base_seed + shapes.len() as u64;
    let mut rng = SplitMix64::new(seed);
    // D from 12: narrower rows would lift the int8 SQNR of expand past the bound that
    // int8_vs_float allows.
    let d = rng.in_range(12, 64);
    shapes.push(CheckpointSpec {
        d,
        i: rng.in_range(d, 3 * d),
        n: rng.in_range(1, 16),
        k: rng.in_range(2, 4),
        r: rng.in_range(1, 4),
        blocks: rng.in_range(1, 3),
        tied: rng.next_u64() & 1 == 0,
        dtype: [F32, F16, Bf16][rng.in_range(0, 2)],
        seed,
    });
    shapes
}
