//! A tiny, deterministic model image for examples, tests and fuzzing.
//!
//! Its weights are pseudo-random (not trained), so its predictions mean nothing; it exists
//! so that every part of the crate can be shown and tested without a file.

use half::f16;

use super::dims::Dims;
use super::format::Role;
use super::writer::{write_image, FloatPayload, Payload, TensorSource};

const D: usize = 8;
const I: usize = 16;
const N: usize = 4;
const K: usize = 4;
const R: usize = 2;

/// Length in bytes of [`tiny_image`].
///
/// ```
/// use inkling_core::image::{example::*, writer::image_len};
/// let (dims, tensors) = tiny_tensors();
/// assert_eq!(image_len(&dims, &tensors), TINY_IMAGE_LEN);
/// assert_eq!(tiny_image().len(), TINY_IMAGE_LEN);
/// ```
pub const TINY_IMAGE_LEN: usize = 4948;

/// The dimensions of the tiny example model: 1 block, D 8, I 16, N 4, K 4, R 2, tied head.
///
/// ```
/// let d = inkling_core::image::example::TINY_DIMS;
/// assert_eq!((d.blocks, d.d_model, d.d_inner), (1, 8, 16));
/// assert_eq!((d.d_state, d.d_conv, d.dt_rank), (4, 4, 2));
/// assert!(d.tied_head);
/// ```
pub const TINY_DIMS: Dims = Dims {
    d_model: D,
    d_inner: I,
    d_state: N,
    d_conv: K,
    dt_rank: R,
    blocks: 1,
    tied_head: true,
    norm_eps: 1e-5,
    group: 0,
};

/// The tensors of the tiny example model.
///
/// ```
/// use inkling_core::image::{example::tiny_tensors, format::Role, writer::{Payload, TensorSource}};
/// let (_, tensors) = tiny_tensors();
/// let expand = tensors.payload(Role::Expand, 0);
/// assert!(matches!(expand, Payload::Int8 { weights, .. } if weights.len() == 2 * 16 * 8));
/// ```
#[derive(Debug, Clone)]
pub struct TinyTensors {
    embed: [i8; 256 * D],
    embed_scales: [f32; 256],
    norm: [f32; D],
    expand: [i8; 2 * I * D],
    expand_scales: [f32; 2 * I],
    conv: [f16; I * K],
    conv_bias: [f32; I],
    select: [i8; (R + 2 * N) * I],
    select_scales: [f32; R + 2 * N],
    step: [f32; I * R],
    step_bias: [f32; I],
    decay: [f32; I * N],
    skip: [f32; I],
    contract: [i8; D * I],
    contract_scales: [f32; D],
}

/// A small deterministic generator (a 32-bit linear congruential generator, the constants of
/// Numerical Recipes).
struct Lcg(u32);

impl Lcg {
    fn next_i8(&mut self) -> i8 {
        self.0 = self.0.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
        (self.0 >> 24) as i8
    }

    fn fill_i8(&mut self, out: &mut [i8]) {
        for v in out {
            *v = self.next_i8();
        }
    }

    /// A value in `[lo, hi)`.
    fn next_f32(&mut self, lo: f32, hi: f32) -> f32 {
        let u = (self.next_i8() as u8) as f32 / 256.0;
        lo + (hi - lo) * u
    }
}

/// The tensors and dimensions of the tiny example model.
///
/// ```
/// let (dims, _tensors) = inkling_core::image::example::tiny_tensors();
/// assert_eq!(dims.d_model, 8);
/// ```
pub fn tiny_tensors() -> (Dims, TinyTensors) {
    let mut g = Lcg(0x1A2B_3C4D);
    let mut t = TinyTensors {
        embed: [0; 256 * D],
        embed_scales: [0.0; 256],
        norm: [1.0; D],
        expand: [0; 2 * I * D],
        expand_scales: [0.0; 2 * I],
        conv: [f16::ZERO; I * K],
        conv_bias: [0.0; I],
        select: [0; (R + 2 * N) * I],
        select_scales: [0.0; R + 2 * N],
        step: [0.0; I * R],
        step_bias: [0.0; I],
        decay: [0.0; I * N],
        skip: [1.0; I],
        contract: [0; D * I],
        contract_scales: [0.0; D],
    };
    g.fill_i8(&mut t.embed);
    g.fill_i8(&mut t.expand);
    g.fill_i8(&mut t.select);
    g.fill_i8(&mut t.contract);
    for s in t.embed_scales.iter_mut() {
        *s = g.next_f32(0.005, 0.02);
    }
    for s in t.expand_scales.iter_mut().chain(t.select_scales.iter_mut()) {
        *s = g.next_f32(0.002, 0.01);
    }
    for s in t.contract_scales.iter_mut() {
        *s = g.next_f32(0.001, 0.004);
    }
    for c in t.conv.iter_mut() {
        *c = f16::from_f32(g.next_f32(-0.5, 0.5));
    }
    for b in t.conv_bias.iter_mut().chain(t.step.iter_mut()) {
        *b = g.next_f32(-0.3, 0.3);
    }
    for b in t.step_bias.iter_mut() {
        // inverse softplus of dt in about [0.005, 0.05]
        *b = g.next_f32(-5.3, -3.0);
    }
    for (j, a) in t.decay.iter_mut().enumerate() {
        // S4D-real: A = -(n + 1)
        *a = -((j % N) as f32 + 1.0);
    }
    (TINY_DIMS, t)
}

impl TensorSource for TinyTensors {
    fn payload(&self, role: Role, _block: usize) -> Payload<'_> {
        let q = |weights, scales| Payload::Int8 {
            weights,
            scales: FloatPayload::F32(scales),
        };
        let f = |v| Payload::Float(FloatPayload::F32(v));
        match role {
            Role::ByteEmbed | Role::Head => q(&self.embed[..], &self.embed_scales[..]),
            Role::FinalNorm | Role::Norm => f(&self.norm[..]),
            Role::Expand => q(&self.expand[..], &self.expand_scales[..]),
            Role::Conv => Payload::Float(FloatPayload::F16(&self.conv[..])),
            Role::ConvBias => f(&self.conv_bias[..]),
            Role::Select => q(&self.select[..], &self.select_scales[..]),
            Role::Step => f(&self.step[..]),
            Role::StepBias => f(&self.step_bias[..]),
            Role::Decay => f(&self.decay[..]),
            Role::Skip => f(&self.skip[..]),
            Role::Contract => q(&self.contract[..], &self.contract_scales[..]),
        }
    }
}

/// The tiny example model as a complete image.
///
/// ```
/// let image = inkling_core::image::example::tiny_image();
/// let model = inkling_core::Model::from_bytes(&image)?;
/// assert_eq!(model.dims(), &inkling_core::image::example::TINY_DIMS);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub fn tiny_image() -> [u8; TINY_IMAGE_LEN] {
    let (dims, tensors) = tiny_tensors();
    let mut out = [0u8; TINY_IMAGE_LEN];
    // The layout of these fixed tensors is fixed, so this cannot fail; a test checks it.
    let _ = write_image(&dims, &tensors, &mut out);
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::image::writer::image_len;

    #[test]
    fn tiny_image_is_valid_and_exactly_sized() {
        let (dims, tensors) = tiny_tensors();
        assert_eq!(image_len(&dims, &tensors), TINY_IMAGE_LEN);
        let image = tiny_image();
        crate::Model::from_bytes(&image).unwrap();
    }
}
