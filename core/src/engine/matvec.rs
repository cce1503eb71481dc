//! The int8 × int16 → i32 matrix-vector product with one f32 rescale per row (or group).
//!
//! Integer sums may be reordered (into SIMD lanes, four rows at a time on the workstation;
//! four rows, or one row for two vectors, at a time with SMLAD on a Cortex-M4); the float
//! rescale is done in one fixed order on every target (on the Cortex-M4 by the FPU inside
//! the kernels' assembly), so every target gets the same bits. The integer kernels are in
//! [`kernels`](super::kernels).
//!
//! With one scale per row the scales are looked at once per matrix: as a plain f32 slice
//! when they are one in memory (every image the quantiser writes, read from 4-byte aligned
//! memory), otherwise through [`Floats::get`] per row.

#[cfg(not(target_arch = "x86_64"))]
pub use super::kernels::portable::dot_i8_i16;
#[cfg(target_arch = "x86_64")]
pub use super::kernels::x86_sse2::dot_i8_i16;

#[cfg(not(target_arch = "x86_64"))]
use super::kernels::portable::dot4_i8_i16;
#[cfg(not(any(
    target_arch = "x86_64",
    all(target_arch = "arm", target_abi = "eabihf")
)))]
use super::kernels::portable::dot4x2_i8_i16;
#[cfg(target_arch = "x86_64")]
use super::kernels::x86_sse2::{dot4_i8_i16, dot4x2_i8_i16};
use crate::image::views::{Floats, QuantMatrix};

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
    if m.group() != 0 {
        for (r, o) in out.iter_mut().enumerate() {
            *o = grouped_output(m, r, act, act_scale);
        }
        return;
    }
    match m.scales().as_f32s() {
        Some(scales) => per_row(m, 0, act, act_scale, scales, out),
        None => per_row(m, 0, act, act_scale, m.scales(), out),
    }
}

/// [`matvec`] of `t = act_scales.len()` vectors at once: `acts` holds them back to back
/// (`[t][cols]`), `out` receives `[t][rows]`. Each output is exactly what [`matvec`] gives for
/// that vector and scale (a vector cut short by the end of `acts`, or an output by the end of
/// `out`, is treated as `matvec` would treat the shorter slice).
///
/// On the workstation each block of four weight rows is read once for all `t` vectors,
/// while it is in cache; on the Cortex-M4 the vectors go two at a time through a kernel that
/// unpacks each weight word once for both (a last odd vector, or vectors or outputs cut
/// short, through the four-row kernel one after another).
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
    for (i, (pair, o)) in act_scales
        .chunks(2)
        .zip(out.chunks_mut(2 * rows))
        .enumerate()
    {
        let (j, split) = (2 * i, rows.min(o.len()));
        if let (&[s0, s1], Some((o0, o1))) = (pair, o.split_at_mut_checked(split)) {
            let acts = [vector(acts, cols, j), vector(acts, cols, j + 1)];
            if arm::matvec_pair(m, acts, [s0, s1], [o0, o1]) {
                continue;
            }
        }
        for (k, (&scale, o)) in pair.iter().zip(o.chunks_mut(rows)).enumerate() {
            matvec(m, vector(acts, cols, j + k), scale, o);
        }
    }
    #[cfg(not(all(target_arch = "arm", target_abi = "eabihf")))]
    if m.group() != 0 {
        for r in 0..rows {
            for (j, &scale) in act_scales.iter().enumerate() {
                if let Some(o) = out.get_mut(j * rows + r) {
                    *o = grouped_output(m, r, vector(acts, cols, j), scale);
                }
            }
        }
    } else {
        match m.scales().as_f32s() {
            Some(scales) => per_row_chunk(m, acts, act_scales, scales, out),
            None => per_row_chunk(m, acts, act_scales, m.scales(), out),
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

/// The scales of a matrix with one per row, read in the form chosen once per matrix.
trait RowScales: Copy {
    /// The scale of row `r`, 0.0 past the end.
    fn at(self, r: usize) -> f32;
}

impl RowScales for &[f32] {
    #[inline(always)]
    fn at(self, r: usize) -> f32 {
        self.get(r).copied().unwrap_or(0.0)
    }
}

impl RowScales for Floats<'_> {
    #[inline(always)]
    fn at(self, r: usize) -> f32 {
        self.get(r)
    }
}

/// The one rescale of a row with one scale: `(sum as f32 · scale) · act_scale`, in that
/// order on every path.
#[inline(always)]
fn rescale(sum: i32, scale: f32, act_scale: f32) -> f32 {
    sum as f32 * scale * act_scale
}

/// Outputs `first..first + out.len()` of [`matvec`] with one scale per row: four rows at a
/// time through the four-row kernel, then the last ones singly.
#[inline]
fn per_row(
    m: &QuantMatrix<'_>,
    first: usize,
    act: &[i16],
    act_scale: f32,
    scales: impl RowScales,
    out: &mut [f32],
) {
    let mut blocks = out.chunks_exact_mut(4);
    let mut r = first;
    for o in &mut blocks {
        let sums = dot4_i8_i16([m.row(r), m.row(r + 1), m.row(r + 2), m.row(r + 3)], act);
        for (k, (o, sum)) in o.iter_mut().zip(sums).enumerate() {
            *o = rescale(sum, scales.at(r + k), act_scale);
        }
        r += 4;
    }
    for (k, o) in blocks.into_remainder().iter_mut().enumerate() {
        *o = rescale(dot_i8_i16(m.row(r + k), act), scales.at(r + k), act_scale);
    }
}

/// [`matvec_chunk`] with one scale per row: each block of four weight rows through the
/// four-row kernel for every vector (two at a time) while it is in cache, then the last rows
/// singly.
#[cfg(not(all(target_arch = "arm", target_abi = "eabihf")))]
fn per_row_chunk(
    m: &QuantMatrix<'_>,
    acts: &[i16],
    act_scales: &[f32],
    scales: impl RowScales,
    out: &mut [f32],
) {
    let (rows, cols) = (m.rows(), m.cols());
    let mut r = 0;
    while r + 4 <= rows {
        let w = [m.row(r), m.row(r + 1), m.row(r + 2), m.row(r + 3)];
        let s = [r, r + 1, r + 2, r + 3].map(|i| scales.at(i));
        // Vectors two at a time, each weight unpacked once for both.
        for (i, pair) in act_scales.chunks(2).enumerate() {
            let j = 2 * i;
            let sums = if pair.len() == 2 {
                dot4x2_i8_i16(w, [vector(acts, cols, j), vector(acts, cols, j + 1)])
            } else {
                [dot4_i8_i16(w, vector(acts, cols, j)), [0; 4]]
            };
            for (v, (&act_scale, sums)) in pair.iter().zip(&sums).enumerate() {
                let at = (j + v) * rows + r;
                for (k, (&sum, &scale)) in sums.iter().zip(&s).enumerate() {
                    if let Some(o) = out.get_mut(at + k) {
                        *o = rescale(sum, scale, act_scale);
                    }
                }
            }
        }
        r += 4;
    }
    for r in r..rows {
        let (w, scale) = (m.row(r), scales.at(r));
        for (j, &act_scale) in act_scales.iter().enumerate() {
            if let Some(o) = out.get_mut(j * rows + r) {
                *o = rescale(dot_i8_i16(w, vector(acts, cols, j)), scale, act_scale);
            }
        }
    }
}

/// Output `r` of [`matvec`] for a matrix with groups of scales: `Σ_g (Σ as f32 · s_g)` in
/// group order, then `· act_scale`.
fn grouped_output(m: &QuantMatrix<'_>, r: usize, act: &[i16], act_scale: f32) -> f32 {
    let mut total = 0.0f32;
    for ((w, a), s) in m
        .row(r)
        .chunks(m.group().max(1))
        .zip(act.chunks(m.group().max(1)))
        .zip(m.row_scales(r).iter())
    {
        total += dot_i8_i16(w, a) as f32 * s;
    }
    total * act_scale
}

/// The Cortex-M4 paths of [`matvec`] and [`matvec_chunk`] (one scale per row, in memory as
/// f32): rows four at a time through the SMLAD kernel, which also rescales them, the last
/// `rows % 4` rows through it once more on the last four rows; two vectors at a time through
/// the two-vector kernel. The same integer sums and the same float rescale as [`per_row`].
#[cfg(all(target_arch = "arm", target_abi = "eabihf"))]
mod arm {
    use super::{dot_i8_i16, per_row};
    use crate::engine::kernels::cortex_m4::{scaled_rows, scaled_rows_pair};
    use crate::image::views::QuantMatrix;

    /// Fills `out` (at most `m.rows()` long) and returns true, or returns false without a
    /// result when the matrix does not suit the kernel (groups of scales, scales that are
    /// not an aligned f32 slice, or more columns than it takes).
    pub(super) fn matvec(
        m: &QuantMatrix<'_>,
        act: &[i16],
        act_scale: f32,
        out: &mut [f32],
    ) -> bool {
        if m.group() != 0 {
            return false;
        }
        let Some(scales) = m.scales().as_f32s() else {
            return false;
        };
        let cols = m.cols();
        // The columns the portable kernel would multiply: the common length.
        let n = cols.min(act.len());
        let quads = n / 4;
        // Rows past the scales get the portable path's 0.0 scale there.
        let first = out.len().min(scales.len()) / 4 * 4;
        let Some((fast, rest)) = out.split_at_mut_checked(first) else {
            return false;
        };
        starts(m, act, n, 0, fast);
        if !scaled_rows(m.weights(), cols, act, quads, scales, act_scale, fast) {
            return false;
        }
        if rest.is_empty() {
            return true;
        }
        // The last `rows % 4` rows: the kernel once more on the last four rows (recomputing
        // a few, into a block of its own), when there are scales for them all.
        if let Some(last) = first
            .checked_add(rest.len())
            .and_then(|end| end.checked_sub(4))
        {
            let weights = m.weights().get(last * cols..).unwrap_or(&[]);
            let mut block = [0.0f32; 4];
            starts(m, act, n, last, &mut block);
            let block_scales = scales.get(last..).unwrap_or(&[]);
            if scaled_rows(
                weights,
                cols,
                act,
                quads,
                block_scales,
                act_scale,
                &mut block,
            ) {
                let skip = block.len() - rest.len();
                for (o, &b) in rest.iter_mut().zip(block.iter().skip(skip)) {
                    *o = b;
                }
                return true;
            }
        }
        per_row(m, first, act, act_scale, scales, rest);
        true
    }

    /// The values the kernel's sums start from for rows `first..first + out.len()`: the
    /// kernel takes whole quads of columns, so each row starts from its last `n % 4`
    /// columns, as the bit pattern of the i32.
    fn starts(m: &QuantMatrix<'_>, act: &[i16], n: usize, first: usize, out: &mut [f32]) {
        let quads = n / 4;
        let tail_act = act.get(4 * quads..n).unwrap_or(&[]);
        if tail_act.is_empty() {
            out.fill(0.0);
        } else {
            for (r, o) in (first..).zip(out.iter_mut()) {
                let tail = dot_i8_i16(m.row(r).get(4 * quads..n).unwrap_or(&[]), tail_act);
                *o = f32::from_bits(tail as u32);
            }
        }
    }

    /// [`matvec`] of two whole vectors (each `m.cols()` long) into two whole outputs (each
    /// `m.rows()` long) through the two-vector kernel, or false without a result when the
    /// matrix or the slices do not suit it (then each vector goes through [`matvec`]).
    pub(super) fn matvec_pair(
        m: &QuantMatrix<'_>,
        acts: [&[i16]; 2],
        act_scales: [f32; 2],
        outs: [&mut [f32]; 2],
    ) -> bool {
        let (rows, cols) = (m.rows(), m.cols());
        if m.group() != 0
            || acts.iter().any(|a| a.len() != cols)
            || outs.iter().any(|o| o.len() != rows)
        {
            return false;
        }
        let Some(scales) = m.scales().as_f32s() else {
            return false;
        };
        scaled_rows_pair(m.weights(), cols, acts, scales, act_scales, outs)
    }
}

#[cfg(test)]
mod tests {
    // The test harness has std (the crate itself has not); buffers of many sizes are Vecs.
    extern crate std;
    use std::{vec, vec::Vec};

    use super::{matvec, matvec_chunk};
    use crate::image::views::{Floats, QuantMatrix};
    use half::f16;

    /// The next value of a 32-bit xorshift generator (Marsaglia 2003, shifts 13, 17, 5).
    fn xorshift(x: &mut u32) -> u32 {
        *x ^= *x << 13;
        *x ^= *x >> 17;
        *x ^= *x << 5;
        *x
    }

    /// Output `r` straight from the definition in `matvec`'s documentation: the integer sum
    /// of each group over the columns both sides have (in i64, so it cannot wrap), times the
    /// group's scale, groups in order, then times `act_scale`. A row whose scales are cut
    /// short has none (`row_scales` is empty), so every group counts 0.0.
    fn definition(m: &QuantMatrix<'_>, r: usize, act: &[i16], act_scale: f32) -> f32 {
        let row = m.row(r);
        let n = row.len().min(act.len());
        let sum = |cs: core::ops::Range<usize>| -> i32 {
            cs.map(|c| i64::from(row[c] as i8) * i64::from(act[c]))
                .sum::<i64>() as i32
        };
        if m.group() == 0 {
            sum(0..n) as f32 * m.scales().get(r) * act_scale
        } else {
            let per_row = m.cols().div_ceil(m.group());
            let mut total = 0.0f32;
            for g in 0..per_row {
                let (start, end) = (g * m.group(), ((g + 1) * m.group()).min(n));
                if start >= n {
                    break;
                }
                total += sum(start..end) as f32 * m.row_scales(r).get(g);
            }
            total * act_scale
        }
    }

    #[test]
    fn every_path_gives_the_definitions_bits() {
        let mut seed = 0x2545_f491u32;
        let weights: Vec<u8> = (0..40 * 101)
            .map(|_| (xorshift(&mut seed) >> 24) as u8)
            .collect();
        let scales: Vec<f32> = (0..40 * 101)
            .map(|i| (1 + i % 37) as f32 * if i % 3 == 0 { -0.01 } else { 0.003 })
            .collect();
        // Binary32 bytes at offset 0 (aligned as the Vec<f32> is) and offset 1 (unaligned),
        // and the same values as binary16.
        let mut bytes = vec![0u32; scales.len() + 1];
        let b: &mut [u8] = bytemuck::cast_slice_mut(&mut bytes);
        for (i, s) in scales.iter().enumerate() {
            b[4 * i..4 * i + 4].copy_from_slice(&s.to_le_bytes());
        }
        let mut shifted = vec![0u8; 4 * scales.len() + 1];
        shifted[1..].copy_from_slice(&b[..4 * scales.len()]);
        let halves: Vec<u8> = scales
            .iter()
            .flat_map(|&s| f16::from_f32(s).to_le_bytes())
            .collect();
        let b: &[u8] = bytemuck::cast_slice(&bytes);
        let mut checked = 0;
        for rows in [0usize, 1, 3, 4, 5, 8, 9, 33, 40] {
            for cols in [0usize, 1, 15, 16, 17, 31, 32, 33, 64, 101] {
                for group in [0usize, 16] {
                    let per_row = if group == 0 { 1 } else { cols.div_ceil(group) };
                    // One scale short as well: the rows past the scales get 0.0.
                    for count in [rows * per_row, (rows * per_row).saturating_sub(1)] {
                        let forms = [
                            Floats::Native(&scales[..count]),
                            Floats::F32Le(&b[..4 * count]),
                            Floats::F32Le(&shifted[1..1 + 4 * count]),
                            Floats::F16Le(&halves[..2 * count]),
                        ];
                        for s in forms {
                            let m = QuantMatrix::new(&weights[..rows * cols], s, rows, cols, group);
                            for extra in [-1isize, 0, 1] {
                                let len = (cols as isize + extra).max(0) as usize;
                                let acts: Vec<i16> = (0..5 * len)
                                    .map(|i| match xorshift(&mut seed) % 9 {
                                        0 => i16::MIN,
                                        1 => i16::MAX,
                                        _ => (i % 255) as i16 - 127,
                                    })
                                    .collect();
                                let act_scales = [0.0123f32, -0.5, 3.0e-5, 7.0, 1.0];
                                let mut out = vec![f32::NAN; rows];
                                matvec(&m, &acts[..len], act_scales[0], &mut out);
                                for (r, o) in out.iter().enumerate() {
                                    let want = definition(&m, r, &acts[..len], act_scales[0]);
                                    assert_eq!(o.to_bits(), want.to_bits(), "{rows}x{cols} r {r}");
                                }
                                if len != cols {
                                    continue;
                                }
                                for t in 1..=5 {
                                    for cut in [0, 1] {
                                        let mut out =
                                            vec![f32::NAN; (t * rows).saturating_sub(cut)];
                                        matvec_chunk(
                                            &m,
                                            &acts[..t * len],
                                            &act_scales[..t],
                                            &mut out,
                                        );
                                        for (i, o) in out.iter().enumerate() {
                                            let (j, r) = (i / rows, i % rows);
                                            let a = &acts[j * len..(j + 1) * len];
                                            let want = definition(&m, r, a, act_scales[j]);
                                            assert_eq!(
                                                o.to_bits(),
                                                want.to_bits(),
                                                "chunk {t} {rows}x{cols}"
                                            );
                                        }
                                    }
                                }
                                checked += 1;
                            }
                        }
                    }
                }
            }
        }
        assert!(checked > 1000, "{checked}");
    }
}
