//! The model shape of `inkling train`: a named preset, with any dimension replaced.

use inkling_core::Dims;
use inkling_train::shapes::{MEDIUM, SMALL, TINY};

/// A named model size; its dimensions are the trainer's named shapes.
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
    pub fn dims(self) -> Dims {
        match self {
            Preset::Tiny => TINY,
            Preset::Small => SMALL,
            Preset::Medium => MEDIUM,
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
pub fn parse_shape(base: Dims, spec: &str) -> Result<Dims, String> {
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
            "d" => &mut dims.d_model,
            "i" => &mut dims.d_inner,
            "n" => &mut dims.d_state,
            "k" => &mut dims.d_conv,
            "r" => &mut dims.dt_rank,
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shape_overrides_named_dimensions_only() {
        let dims = parse_shape(Preset::Small.dims(), "n=4, r=8").unwrap();
        assert_eq!(
            (
                dims.blocks,
                dims.d_model,
                dims.d_inner,
                dims.d_state,
                dims.d_conv,
                dims.dt_rank
            ),
            (3, 96, 128, 4, 4, 8)
        );
        assert!(parse_shape(Preset::Small.dims(), "q=3").is_err());
        assert!(parse_shape(Preset::Small.dims(), "n=0").is_err());
        assert!(parse_shape(Preset::Small.dims(), "n").is_err());
    }
}
