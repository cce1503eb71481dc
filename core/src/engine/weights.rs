//! Where the engine's weights come from.

use super::activation::quantise;
use super::buffers::MAX_CHUNK;
use super::matvec::{matvec, matvec_chunk};
use crate::image::dims::Dims;
use crate::image::format::Role;
use crate::image::views::{Floats, QuantMatrix};
use crate::Model;

/// A source of model weights that [`step`](super::recurrence::step) can run on.
///
/// The int8 [`Model`] implements it; the workstation's float engine does too, so both run
/// the very same recurrence and differ only in their matrix products.
///
/// ```
/// use inkling_core::{Model, engine::weights::Weights};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// let mut e = [0.0f32; 8];
/// model.embed(b'a', &mut e); // the dequantised row of `byte_embed`
/// assert_eq!(e[3], model.byte_embed().weight(b'a' as usize, 3));
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub trait Weights {
    /// The model's dimensions.
    fn dims(&self) -> &Dims;

    /// Writes the embedding of `byte` into `out` (`[D]`).
    fn embed(&self, byte: u8, out: &mut [f32]);

    /// A float tensor of block `block` (`Norm`, `Conv`, `ConvBias`, `Step`, `StepBias`,
    /// `Decay` as `A = -exp(decay)`, `Skip`), or `final_norm` with [`Role::FinalNorm`].
    fn floats(&self, block: usize, role: Role) -> Floats<'_>;

    /// `out = W · input` for the matrix `role` of block `block` (`Expand`, `Select`,
    /// `Contract`), or the output head with [`Role::Head`]. `act` is scratch for the
    /// quantised input (at least `input.len()` elements).
    fn matvec(&self, block: usize, role: Role, input: &[f32], act: &mut [i16], out: &mut [f32]);

    /// [`matvec`](Weights::matvec) for `t` inputs at once: `inputs` is `[t][cols]`, `out`
    /// `[t][rows]`, `act` at least `inputs.len()` elements. Each output must equal what
    /// `matvec` gives for its input; a source may read each weight row once for all `t`.
    fn matvec_chunk(
        &self,
        block: usize,
        role: Role,
        inputs: &[f32],
        t: usize,
        act: &mut [i16],
        out: &mut [f32],
    ) {
        let (cols, rows) = (inputs.len() / t.max(1), out.len() / t.max(1));
        if cols == 0 || rows == 0 {
            return;
        }
        for (x, o) in inputs.chunks_exact(cols).zip(out.chunks_exact_mut(rows)) {
            self.matvec(block, role, x, act, o);
        }
    }
}

/// The int8 matrix behind `(block, role)`: the output head for [`Role::Head`].
fn quant_matrix<'a>(model: &Model<'a>, block: usize, role: Role) -> QuantMatrix<'a> {
    if role == Role::Head {
        model.head()
    } else {
        model.block_matrix(block, role)
    }
}

impl Weights for Model<'_> {
    fn dims(&self) -> &Dims {
        Model::dims(self)
    }

    fn embed(&self, byte: u8, out: &mut [f32]) {
        let m = self.byte_embed();
        let row = m.row(byte as usize);
        let scales = m.row_scales(byte as usize);
        let group = m.group();
        for (c, (o, &w)) in out.iter_mut().zip(row).enumerate() {
            let s = scales.get(c.checked_div(group).unwrap_or(0));
            *o = (w as i8) as f32 * s;
        }
    }

    fn floats(&self, block: usize, role: Role) -> Floats<'_> {
        if role == Role::FinalNorm {
            self.final_norm()
        } else {
            self.block_floats(block, role)
        }
    }

    fn matvec(&self, block: usize, role: Role, input: &[f32], act: &mut [i16], out: &mut [f32]) {
        let m = quant_matrix(self, block, role);
        let act = act.get_mut(..input.len()).unwrap_or(&mut []);
        let scale = quantise(input, act);
        matvec(&m, act, scale, out);
    }

    fn matvec_chunk(
        &self,
        block: usize,
        role: Role,
        inputs: &[f32],
        t: usize,
        act: &mut [i16],
        out: &mut [f32],
    ) {
        let m = quant_matrix(self, block, role);
        let cols = m.cols();
        let t = t.min(MAX_CHUNK);
        if cols == 0 || inputs.len() < t * cols {
            return;
        }
        let mut scales = [0.0f32; MAX_CHUNK];
        for ((x, q), s) in inputs
            .chunks_exact(cols)
            .zip(act.chunks_exact_mut(cols))
            .zip(scales.iter_mut())
            .take(t)
        {
            *s = quantise(x, q);
        }
        let act = act.get(..t * cols).unwrap_or(&[]);
        matvec_chunk(&m, act, scales.get(..t).unwrap_or(&[]), out);
    }
}

/// A reference to weights is weights too, so a session can borrow a model it does not own.
impl<T: Weights + ?Sized> Weights for &T {
    fn dims(&self) -> &Dims {
        (**self).dims()
    }

    fn embed(&self, byte: u8, out: &mut [f32]) {
        (**self).embed(byte, out)
    }

    fn floats(&self, block: usize, role: Role) -> Floats<'_> {
        (**self).floats(block, role)
    }

    fn matvec(&self, block: usize, role: Role, input: &[f32], act: &mut [i16], out: &mut [f32]) {
        (**self).matvec(block, role, input, act, out)
    }

    fn matvec_chunk(
        &self,
        block: usize,
        role: Role,
        inputs: &[f32],
        t: usize,
        act: &mut [i16],
        out: &mut [f32],
    ) {
        (**self).matvec_chunk(block, role, inputs, t, act, out)
    }
}
