//! The portable integer kernel: int8 weights × int16 activations, summed in i32.
//!
//! Fixed-size chunks of 16 columns (no bounds checks in the loop), each summed on its own:
//! the compiler turns that into SIMD on the workstation (16-bit multiply-adds on x86-64) and
//! into a plain loop on a microcontroller. Sums wrap mod 2^32, as the Cortex-M4 kernel's do,
//! so the two agree on any input; with at most 8192 columns of |w| ≤ 128 and |a| ≤ 127
//! (what [`quantise`](crate::engine::activation::quantise) gives) the sum stays below 2^27
//! and never wraps.

/// Columns per chunk of the loop.
const CHUNK: usize = 16;

/// Σ w·a over the common length of `row` (int8 weights as stored bytes) and `act`, in i32.
///
/// ```
/// use inkling_core::engine::matvec::dot_i8_i16;
/// // int8 bytes 0xFF = -1 and 0x02 = 2
/// assert_eq!(dot_i8_i16(&[0xFF, 0x02, 0x03], &[10, 20, 30]), -10 + 40 + 90);
/// ```
#[inline]
pub fn dot_i8_i16(row: &[u8], act: &[i16]) -> i32 {
    let n = row.len().min(act.len());
    let (row, act) = (row.get(..n).unwrap_or(&[]), act.get(..n).unwrap_or(&[]));
    let (row_chunks, row_tail) = row.as_chunks::<CHUNK>();
    let (act_chunks, act_tail) = act.as_chunks::<CHUNK>();
    let product = |(&w, &a): (&u8, &i16)| (w as i8 as i32).wrapping_mul(a as i32);
    let mut sum = row_tail
        .iter()
        .zip(act_tail)
        .map(product)
        .fold(0i32, i32::wrapping_add);
    for (w, a) in row_chunks.iter().zip(act_chunks) {
        let chunk = w.iter().zip(a).map(product).fold(0i32, i32::wrapping_add);
        sum = sum.wrapping_add(chunk);
    }
    sum
}

/// [`dot_i8_i16`] of four rows against the same activations, `[dot_i8_i16(rows[k], act)]`
/// for k in 0..4: the interface of the workstation's four-row kernel, for the cores that
/// have none.
///
/// ```
/// use inkling_core::engine::kernels::portable::{dot4_i8_i16, dot_i8_i16};
/// let w = [1u8, 2, 0xFF, 4, 5, 6, 7, 8];
/// let rows = [&w[..2], &w[2..4], &w[4..6], &w[6..]];
/// assert_eq!(dot4_i8_i16(rows, &[3, -1]), [1, -7, 9, 13]);
/// assert_eq!(dot4_i8_i16(rows, &[3, -1])[2], dot_i8_i16(rows[2], &[3, -1]));
/// ```
#[inline]
pub fn dot4_i8_i16(rows: [&[u8]; 4], act: &[i16]) -> [i32; 4] {
    rows.map(|r| dot_i8_i16(r, act))
}

/// [`dot4_i8_i16`] of the same four rows against two activation vectors,
/// `[dot4_i8_i16(rows, acts[0]), dot4_i8_i16(rows, acts[1])]`: the interface of the
/// workstation's two-vector kernel, for the cores that have none.
///
/// ```
/// use inkling_core::engine::kernels::portable::{dot4_i8_i16, dot4x2_i8_i16};
/// let w = [1u8, 2, 0xFF, 4, 5, 6, 7, 8];
/// let rows = [&w[..2], &w[2..4], &w[4..6], &w[6..]];
/// let sums = dot4x2_i8_i16(rows, [&[3, -1], &[0, 2]]);
/// assert_eq!(sums, [[1, -7, 9, 13], [4, 8, 12, 16]]);
/// assert_eq!(sums[1], dot4_i8_i16(rows, &[0, 2]));
/// ```
#[inline]
pub fn dot4x2_i8_i16(rows: [&[u8]; 4], acts: [&[i16]; 2]) -> [[i32; 4]; 2] {
    acts.map(|a| dot4_i8_i16(rows, a))
}
