//! The x86-64 integer kernel: SSE2 (part of every x86-64 core, so no run-time detection is
//! needed) 16-bit multiply-add, 16 columns per iteration.

use core::arch::x86_64::{
    __m128i, _mm_add_epi32, _mm_cvtsi128_si32, _mm_loadu_si128, _mm_madd_epi16, _mm_setzero_si128,
    _mm_shuffle_epi32, _mm_srai_epi16, _mm_unpackhi_epi8, _mm_unpacklo_epi8,
};

use super::portable;

/// Σ w·a over the common length of `row` (int8 weights as stored bytes) and `act`, in i32:
/// exactly [`portable::dot_i8_i16`] (integer sums, reordered; they never wrap for the
/// lengths an image allows).
///
/// ```
/// use inkling_core::engine::kernels::x86_sse2::dot_i8_i16;
/// let row: Vec<u8> = (0..37).map(|i| (i * 53) as u8).collect();
/// let act: Vec<i16> = (0..37).map(|i| (i * 7 - 120) as i16).collect();
/// assert_eq!(dot_i8_i16(&row, &act), inkling_core::engine::kernels::portable::dot_i8_i16(&row, &act));
/// ```
#[inline]
pub fn dot_i8_i16(row: &[u8], act: &[i16]) -> i32 {
    let n = row.len().min(act.len());
    let (row, act) = (row.get(..n).unwrap_or(&[]), act.get(..n).unwrap_or(&[]));
    let (row_chunks, row_tail) = row.as_chunks::<16>();
    let (act_chunks, act_tail) = act.as_chunks::<16>();
    let mut acc = zero();
    for (w, a) in row_chunks.iter().zip(act_chunks) {
        // SAFETY: `w` is 16 readable bytes and `a` 16 readable i16 (32 bytes); the loads are
        // unaligned loads, valid for any address. SSE2 is part of the x86-64 baseline.
        acc = unsafe {
            let w = _mm_loadu_si128(w.as_ptr().cast::<__m128i>());
            let a_lo = _mm_loadu_si128(a.as_ptr().cast::<__m128i>());
            let a_hi = _mm_loadu_si128(a.as_ptr().add(8).cast::<__m128i>());
            // Each byte paired with itself, then shifted: the int8 weights sign-extended to i16.
            let w_lo = _mm_srai_epi16(_mm_unpacklo_epi8(w, w), 8);
            let w_hi = _mm_srai_epi16(_mm_unpackhi_epi8(w, w), 8);
            let s = _mm_add_epi32(_mm_madd_epi16(w_lo, a_lo), _mm_madd_epi16(w_hi, a_hi));
            _mm_add_epi32(acc, s)
        };
    }
    // SAFETY: register-only SSE2 operations on a value already computed.
    let total = unsafe {
        let s = _mm_add_epi32(acc, _mm_shuffle_epi32(acc, 0b01_00_11_10));
        let s = _mm_add_epi32(s, _mm_shuffle_epi32(s, 0b10_11_00_01));
        _mm_cvtsi128_si32(s)
    };
    total.wrapping_add(portable::dot_i8_i16(row_tail, act_tail))
}

/// An all-zero SSE register.
fn zero() -> __m128i {
    // SAFETY: SSE2 is part of the x86-64 baseline; this only sets a register.
    unsafe { _mm_setzero_si128() }
}
