//! The float engine: a checkpoint run in f32 through the same recurrence as the device.
//!
//! It implements [`Weights`], so `inkling_core::engine::recurrence::step` runs it; only
//! the matrix products differ from the int8 engine (plain f32 dot products here).

use inkling_core::engine::weights::Weights;
use inkling_core::image::format::Role;
use inkling_core::image::views::Floats;
use inkling_core::Dims;

use crate::checkpoint::{schema_name, Checkpoint};

/// A checkpoint's weights in f32, with `A = -exp(decay)` computed once.
#[derive(Debug, Clone)]
pub struct FloatModel {
    checkpoint: Checkpoint,
    decay_rates: Vec<Vec<f32>>,
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
        FloatModel {
            checkpoint,
            decay_rates,
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
        let name = match role {
            Role::Head if self.checkpoint.dims.tied_head => schema_name(Role::ByteEmbed, 0),
            Role::Head => schema_name(Role::Head, 0),
            _ => schema_name(role, block),
        };
        let w = self.checkpoint.tensor(&name);
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
