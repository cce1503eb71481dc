//! Model shapes: the trainer takes the core's [`Dims`] (one definition of what a shape is);
//! here are the named shapes the command offers and the text that shows a shape.

use inkling_core::Dims;
use inkling_quantize::checkpoint::DEFAULT_NORM_EPS;

/// A shape of `blocks` blocks with a tied head, the design's norm epsilon and per-row scales.
pub const fn shape(
    blocks: usize,
    d_model: usize,
    d_inner: usize,
    d_state: usize,
    d_conv: usize,
    dt_rank: usize,
) -> Dims {
    Dims {
        d_model,
        d_inner,
        d_state,
        d_conv,
        dt_rank,
        blocks,
        tied_head: true,
        norm_eps: DEFAULT_NORM_EPS,
        group: 0,
    }
}

/// 1 block, D=16, I=32, N=4, K=4, R=2 (tests).
pub const TINY: Dims = shape(1, 16, 32, 4, 4, 2);
/// 3 blocks, D=96, I=128, N=8, K=4, R=6 (the demo model).
pub const SMALL: Dims = shape(3, 96, 128, 8, 4, 6);
/// 4 blocks, D=128, I=256, N=16, K=4, R=8.
pub const MEDIUM: Dims = shape(4, 128, 256, 16, 4, 8);

/// `blocks=3,d=96,i=128,n=8,k=4,r=6`, with ` (own head)` for an untied head and the norm
/// epsilon when it is not the design's.
pub fn describe(dims: &Dims) -> String {
    let mut text = format!(
        "blocks={},d={},i={},n={},k={},r={}",
        dims.blocks, dims.d_model, dims.d_inner, dims.d_state, dims.d_conv, dims.dt_rank
    );
    if !dims.tied_head {
        text.push_str(" (own head)");
    }
    if dims.norm_eps != DEFAULT_NORM_EPS {
        text.push_str(&format!(" (norm_eps {:e})", dims.norm_eps));
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn description_names_every_dimension() {
        assert_eq!(describe(&SMALL), "blocks=3,d=96,i=128,n=8,k=4,r=6");
        let untied = Dims {
            tied_head: false,
            ..TINY
        };
        assert_eq!(
            describe(&untied),
            "blocks=1,d=16,i=32,n=4,k=4,r=2 (own head)"
        );
    }
}
