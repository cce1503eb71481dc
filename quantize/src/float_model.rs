//! The float engine: a checkpoint run in f32 through the same recurrence as the device.
//!
//! It implements [`Weights`], so `inkling_core::engine::recurrence::step` runs it; only
//! the matrix products differ from the int8 engine (plain f32 dot products here).

use inkling_core::engine::weights::Weights;
use inkling_core::image::format::Role;
use inkling_core::image::views::Floats;
use inkling_core::Dims;

use crate::checkpoint::Checkpoint;

/// A checkpoint's weights in f32, with `A = -exp(decay)` computed once.
#[derive(Debug, Clone)]
pub struct FloatModel {
    checkpoint: Checkpoint,
    decay_rates: Vec<Vec<f32>>,
    /// Per block: expand, select, contract (looked up once, not per step).
    matrices: Vec<[Vec<f32>; 3]>,
    head: Vec<f32>,
}

impl FloatModel {
    /// Prepares a checkpoint for running.
    pub fn new(checkpoint: Checkpoint) -> Self {
        let decay_rates = (0..checkpoint.dims.blocks)
            .map(|l| {
                checkpoint
                    .role(Role::Decay, l)
                    .iter()
                    .map(|&d| -libm::expf(d))
                    .collect()
            })
            .collect();
        let matrices = (0..checkpoint.dims.blocks)
            .map(|l| {
                [Role::Expand, Role::Select, Role::Contract].map(|r| checkpoint.role(r, l).to_vec())
            })
            .collect();
        let head_role = if checkpoint.dims.tied_head {
            Role::ByteEmbed
        } else {
            Role::Head
        };
        let head = checkpoint.role(head_role, 0).to_vec();
        FloatModel {
            checkpoint,
            decay_rates,
            matrices,
            head,
        }
    }

    /// The checkpoint.
    pub fn checkpoint(&self) -> &Checkpoint {
        &self.checkpoint
    }
}

impl Weights for FloatModel {
    fn dims(&self) -> &Dims {
        &self.checkpoint.dims
    }

    fn embed(&self, byte: u8, out: &mut [f32]) {
        let d = self.checkpoint.dims.d_model;
        let start = byte as usize * d;
        let table = self.checkpoint.role(Role::ByteEmbed, 0);
        out.copy_from_slice(&table[start..start + d]);
    }

    fn floats(&self, block: usize, role: Role) -> Floats<'_> {
        match role {
            Role::Decay => Floats::Native(&self.decay_rates[block]),
            Role::FinalNorm => Floats::Native(self.checkpoint.role(role, 0)),
            _ => Floats::Native(self.checkpoint.role(role, block)),
        }
    }

    fn matvec(&self, block: usize, role: Role, input: &[f32], _act: &mut [i16], out: &mut [f32]) {
        let w: &[f32] = match role {
            Role::Head => &self.head,
            Role::Expand => &self.matrices[block][0],
            Role::Select => &self.matrices[block][1],
            _ => &self.matrices[block][2],
        };
        let cols = input.len();
        for (o, row) in out.iter_mut().zip(w.chunks_exact(cols)) {
            let mut acc = 0.0f32;
            for (&a, &b) in row.iter().zip(input) {
                acc += a * b;
            }
            *o = acc;
        }
    }
}
