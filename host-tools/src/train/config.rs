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

/// A model shape given on the command line: a preset, with any of its dimensions
/// replaced by `name=value` pairs (`blocks`, `d`, `i`, `n`, `k`, `r`), e.g.
/// `--config small --shape n=4,r=8`.
pub fn parse_shape(base: ModelDims, spec: &str) -> Result<ModelDims, String> {
    let mut dims = base;
    for pair in spec.split(',').map(str::trim).filter(|p| !p.is_empty()) {
        let (name, value) = pair
            .split_once('=')
            .ok_or_else(|| format!("`{pair}` is not name=value (names: blocks, d, i, n, k, r)"))?;
        let value: usize = value
            .trim()
            .parse()
            .map_err(|_| format!("`{pair}`: the value is not a whole number"))?;
        if value == 0 {
            return Err(format!("`{pair}`: every dimension must be at least 1"));
        }
        let slot = match name.trim() {
            "blocks" => &mut dims.blocks,
            "d" => &mut dims.d,
            "i" => &mut dims.i,
            "n" => &mut dims.n,
            "k" => &mut dims.k,
            "r" => &mut dims.r,
            other => {
                return Err(format!(
                    "`{other}` is not a dimension (names: blocks, d, i, n, k, r)"
                ))
            }
        };
        *slot = value;
    }
    Ok(dims)
}

impl fmt::Display for ModelDims {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "blocks={},d={},i={},n={},k={},r={}{}",
            self.blocks,
            self.d,
            self.i,
            self.n,
            self.k,
            self.r,
            if self.tied { "" } else { " (own head)" }
        )
    }
}

impl fmt::Display for Preset {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shape_overrides_named_dimensions_only() {
        let dims = parse_shape(Preset::Small.dims(), "n=4, r=8").unwrap();
        assert_eq!(
            (dims.blocks, dims.d, dims.i, dims.n, dims.k, dims.r),
            (3, 96, 128, 4, 4, 8)
        );
        assert!(parse_shape(Preset::Small.dims(), "q=3").is_err());
        assert!(parse_shape(Preset::Small.dims(), "n=0").is_err());
        assert!(parse_shape(Preset::Small.dims(), "n").is_err());
    }
}
