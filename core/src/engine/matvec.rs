//! The int8 × int16 → i32 matrix-vector product with one f32 rescale per row (or group).
//!
//! Integer sums may be reordered (into SIMD lanes on the workstation, four rows at a time
//! with SMLAD on a Cortex-M4); the float rescale is done in one fixed order on every target,
//! so every target gets the same bits. The integer kernels are in [`kernels`](super::kernels).

#[cfg(not(target_arch = "x86_64"))]
pub use super::kernels::portable::dot_i8_i16;
#[cfg(target_arch = "x86_64")]
pub use super::kernels::x86_sse2::dot_i8_i16;

use crate::image::views::QuantMatrix;

/// `out[r] = act_scale · Σ_g scale[r, g] · Σ_{c in g} w[r, c] · act[c]`.
///
/// `act` holds the quantised input (see [`quantise`](super::activation::quantise)) and
/// `act_scale` its scale. Rows past `out.len()` are not computed. With one scale per row the
/// rescale is `(Σ as f32 · scale) · act_scale`; with groups, `(Σ_g Σ as f32 · scale_g) ·
/// act_scale`, groups in order.
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
    let rows = m.rows().min(out.len());
    let out = out.get_mut(..rows).unwrap_or(&mut []);
    #[cfg(all(target_arch = "arm", target_abi = "eabihf"))]
    if arm::matvec(m, act, act_scale, out) {
        return;
    }
    for (r, o) in out.iter_mut().enumerate() {
        *o = row_output(m, r, act, act_scale);
    }
}

/// [`matvec`] of `t = act_scales.len()` vectors at once: `acts` holds them back to back
/// (`[t][cols]`), `out` receives `[t][rows]`. Each output is exactly what [`matvec`] gives for
/// that vector and scale (a vector cut short by the end of `acts`, or an output by the end of
/// `out`, is treated as `matvec` would treat the shorter slice).
///
/// On the workstation each weight row is read once for all `t` vectors, while it is in
/// cache; on the Cortex-M4 the vectors go through the four-row kernel one after another.
///
/// ```
/// use inkling_core::engine::matvec::{matvec, matvec_chunk};
/// use inkling_core::image::views::{Floats, QuantMatrix};
/// let w = [1u8, 2, 3, 4, 0xFF, 0xFE];
/// let m = QuantMatrix::new(&w, Floats::Native(&[1.0, 0.5, 0.25]), 3, 2, 0);
/// let acts = [10i16, 20, -7, 3];
/// let mut both = [0.0; 6];
/// matvec_chunk(&m, &acts, &[0.1, 0.3], &mut both);
/// let mut second = [0.0; 3];
/// matvec(&m, &acts[2..], 0.3, &mut second);
/// assert_eq!(&both[3..], &second);
/// ```
pub fn matvec_chunk(m: &QuantMatrix<'_>, acts: &[i16], act_scales: &[f32], out: &mut [f32]) {
    let (rows, cols) = (m.rows(), m.cols());
    if rows == 0 {
        return;
    }
    #[cfg(all(target_arch = "arm", target_abi = "eabihf"))]
    {
        for (j, (&scale, o)) in act_scales.iter().zip(out.chunks_mut(rows)).enumerate() {
            matvec(m, vector(acts, cols, j), scale, o);
        }
    }
    #[cfg(not(all(target_arch = "arm", target_abi = "eabihf")))]
    for r in 0..rows {
        for (j, &scale) in act_scales.iter().enumerate() {
            if let Some(o) = out.get_mut(j * rows + r) {
                *o = row_output(m, r, vector(acts, cols, j), scale);
            }
        }
    }
}

/// Vector `j` of `cols` values in `acts`, cut at its end.
#[inline]
fn vector(acts: &[i16], cols: usize, j: usize) -> &[i16] {
    let start = (j * cols).min(acts.len());
    let end = (start + cols).min(acts.len());
    acts.get(start..end).unwrap_or(&[])
}

/// Output `r` of [`matvec`], with the portable kernel.
#[inline]
fn row_output(m: &QuantMatrix<'_>, r: usize, act: &[i16], act_scale: f32) -> f32 {
    let row = m.row(r);
    let group = m.group();
    if group == 0 {
        // One scale per row: scale r, without slicing out the row's scales.
        dot_i8_i16(row, act) as f32 * m.scales().get(r) * act_scale
    } else {
        let mut total = 0.0f32;
        for ((w, a), s) in row
            .chunks(group)
            .zip(act.chunks(group))
            .zip(m.row_scales(r).iter())
        {
            total += dot_i8_i16(w, a) as f32 * s;
        }
        total * act_scale
    }
}

/// The Cortex-M4 path of [`matvec`] (one scale per row): rows four at a time through the
/// SMLAD kernel, then the last `cols % 4` columns and the last `rows % 4` rows through the
/// portable one. The same integer sums and the same float rescale as [`row_output`].
#[cfg(all(target_arch = "arm", target_abi = "eabihf"))]
mod arm {
    use super::{dot_i8_i16, row_output};
    use crate::engine::kernels::cortex_m4::row_sums;
    use crate::image::views::{Floats, QuantMatrix};

    /// `scales.get(0)`, written out so that it inlines into the rescale loop.
    #[inline(always)]
    fn first_scale(scales: Floats<'_>) -> f32 {
        match scales {
            Floats::F32Le(b) => b.first_chunk::<4>().map_or(0.0, |&s| f32::from_le_bytes(s)),
            Floats::F16Le(b) => b
                .first_chunk::<2>()
                .map_or(0.0, |&s| half::f16::from_le_bytes(s).to_f32()),
            Floats::Native(v) => v.first().copied().unwrap_or(0.0),
        }
    }

    /// Fills `out` (at most `m.rows()` long) and returns true, or returns false without
    /// touching it when the matrix does not suit the kernel (groups of scales, or more
    /// columns than it takes).
    pub(super) fn matvec(
        m: &QuantMatrix<'_>,
        act: &[i16],
        act_scale: f32,
        out: &mut [f32],
    ) -> bool {
        if m.group() != 0 {
            return false;
        }
        let cols = m.cols();
        // The columns the portable kernel would multiply: the common length.
        let n = cols.min(act.len());
        let quads = n / 4;
        let first = out.len() / 4 * 4;
        let (fast, rest) = out.split_at_mut(first);
        // The kernel leaves each row's i32 sum in `fast` as a bit pattern; the rescale
        // replaces it.
        if !row_sums(m.weights(), cols, act, quads, first / 4, fast) {
            return false;
        }
        if !n.is_multiple_of(4) {
            let tail_act = act.get(4 * quads..n).unwrap_or(&[]);
            for (r, o) in fast.iter_mut().enumerate() {
                let tail = dot_i8_i16(m.row(r).get(4 * quads..n).unwrap_or(&[]), tail_act);
                *o = f32::from_bits((o.to_bits() as i32).wrapping_add(tail) as u32);
            }
        }
        for (r, o) in fast.iter_mut().enumerate() {
            *o = (o.to_bits() as i32) as f32 * first_scale(m.row_scales(r)) * act_scale;
        }
        for (k, o) in rest.iter_mut().enumerate() {
            *o = row_output(m, first + k, act, act_scale);
        }
        true
    }
}
