//! The exact size of the image `inkling convert` writes for given dimensions: the core's
//! writer lays out placeholder tensors of the shapes and element types convert uses (int8
//! matrices with one f32 scale per row or group, small tensors in f32, or f16 with
//! `--f16-floats`).

use half::f16;
use inkling_core::image::format::Role;
use inkling_core::image::writer::{image_len, FloatPayload, Payload, TensorSource};
use inkling_core::Dims;

/// Zeros long enough for any tensor of `d`.
struct Placeholder {
    dims: Dims,
    f16_floats: bool,
    f32s: Vec<f32>,
    f16s: Vec<f16>,
    i8s: Vec<i8>,
}

impl TensorSource for Placeholder {
    fn payload(&self, role: Role, _block: usize) -> Payload<'_> {
        let (rows, cols) = self.dims.shape(role);
        if role.is_quantised() {
            Payload::Int8 {
                weights: &self.i8s[..rows * cols],
                scales: FloatPayload::F32(&self.f32s[..rows * self.dims.scales_per_row(cols)]),
            }
        } else if self.f16_floats {
            Payload::Float(FloatPayload::F16(&self.f16s[..rows * cols]))
        } else {
            Payload::Float(FloatPayload::F32(&self.f32s[..rows * cols]))
        }
    }
}

/// Bytes of the image of a model with dimensions `d`.
pub fn image_bytes(d: &Dims, f16_floats: bool) -> usize {
    let largest = [
        Role::ByteEmbed,
        Role::Expand,
        Role::Select,
        Role::Contract,
        Role::Conv,
        Role::Step,
        Role::Decay,
    ]
    .into_iter()
    .map(|r| {
        let (rows, cols) = d.shape(r);
        rows * cols
    })
    .max()
    .unwrap_or(0);
    let source = Placeholder {
        dims: *d,
        f16_floats,
        f32s: vec![0.0; largest],
        f16s: vec![f16::ZERO; largest],
        i8s: vec![0; largest],
    };
    image_len(d, &source)
}
