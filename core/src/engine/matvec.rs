//! The int8 × int16 → i32 matrix-vector product with one f32 rescale per row (or group).
//!
//! Integer sums may be reordered by the compiler (and are, into SIMD lanes); the float
//! rescale is done in a fixed order so that every target gets the same bits.

use crate::image::views::QuantMatrix;

/// Σ w·a over a row, in i32. With at most 8192 columns of |w| ≤ 128 and |a| ≤ 127, the sum
/// stays below 2^27: no overflow.
#[inline]
pub fn dot_i8_i16(row: &[u8], act: &[i16]) -> i32 {
    row.iter()
        .zip(act)
        .map(|(&w, &a)| (w as i8 as i32) * (a as i32))
        .sum()
}

/// `out[r] = act_scale · Σ_g scale[r, g] · Σ_{c in g} w[r, c] · act[c]`.
///
/// `act` holds the quantised input (see [`quantise`](super::activation::quantise)) and
/// `act_scale` its scale. Rows past `out.len()` are not computed.
///
/// ```
/// use inkling_core::engine::matvec::matvec;
/// use inkling_core::image::views::{Floats, QuantMatrix};
/// let w = [1u8, 2, 3, 4];
/// let m = QuantMatrix::new(&w, Floats::Native(&[1.0, 0.5]), 2, 2, 0);
/// let mut out = [0.0; 2];
/// matvec(&m, &[10, 20], 0.1, &mut out);
/// assert!((out[0] - 5.0).abs() < 1e-6 && (out[1] - 5.5).abs() < 1e-6);
/// ```
pub fn matvec(m: &QuantMatrix<'_>, act: &[i16], act_scale: f32, out: &mut [f32]) {
    let group = m.group();
    for (r, o) in out.iter_mut().enumerate().take(m.rows()) {
        let row = m.row(r);
        let scales = m.row_scales(r);
        *o = if group == 0 {
            dot_i8_i16(row, act) as f32 * scales.get(0) * act_scale
        } else {
            let mut total = 0.0f32;
            for ((w, a), s) in row.chunks(group).zip(act.chunks(group)).zip(scales.iter()) {
                total += dot_i8_i16(w, a) as f32 * s;
            }
            total * act_scale
        };
    }
}
