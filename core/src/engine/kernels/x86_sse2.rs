//! The x86-64 integer kernels: SSE2 (part of every x86-64 core, so no run-time detection is
//! needed) 16-bit multiply-add, 16 columns per iteration: one row, four rows sharing each
//! load of activations, or four rows against two vectors sharing each unpacked weight.
//!
//! The weights are sign-extended by a compare (the sign bytes) and two unpacks per 16: the
//! unpacks and the multiply-adds share the core's SIMD ports, and two arithmetic shifts in
//! place of the compare made the one-row kernel about half as fast (measured on the demo
//! model's matrices: the four-row kernel takes about 0.05 ns per multiply-accumulate on a
//! 2.6 GHz server core).

use core::arch::x86_64::{
    __m128i, _mm_add_epi32, _mm_cmpgt_epi8, _mm_cvtsi128_si32, _mm_loadu_si128, _mm_madd_epi16,
    _mm_setzero_si128, _mm_shuffle_epi32, _mm_storeu_si128, _mm_unpackhi_epi32, _mm_unpackhi_epi64,
    _mm_unpackhi_epi8, _mm_unpacklo_epi32, _mm_unpacklo_epi64, _mm_unpacklo_epi8,
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
        let (a_lo, a_hi) = load_act(a);
        acc = multiply_add(acc, w, a_lo, a_hi);
    }
    // SAFETY: register-only SSE2 operations on a value already computed.
    let total = unsafe {
        let s = _mm_add_epi32(acc, _mm_shuffle_epi32(acc, 0b01_00_11_10));
        let s = _mm_add_epi32(s, _mm_shuffle_epi32(s, 0b10_11_00_01));
        _mm_cvtsi128_si32(s)
    };
    total.wrapping_add(portable::dot_i8_i16(row_tail, act_tail))
}

/// [`dot_i8_i16`] of four rows against the same activations, `[dot_i8_i16(rows[k], act)]`
/// for k in 0..4, with each load of 16 activations shared by the four rows. Rows of
/// different lengths go one by one.
///
/// ```
/// use inkling_core::engine::kernels::{portable, x86_sse2::dot4_i8_i16};
/// let w: Vec<u8> = (0..4 * 37).map(|i| (i * 53) as u8).collect();
/// let act: Vec<i16> = (0..37).map(|i| (i * 7 - 120) as i16).collect();
/// let rows = [&w[..37], &w[37..74], &w[74..111], &w[111..]];
/// assert_eq!(dot4_i8_i16(rows, &act), rows.map(|r| portable::dot_i8_i16(r, &act)));
/// ```
#[inline]
pub fn dot4_i8_i16<'a>(rows: [&'a [u8]; 4], act: &[i16]) -> [i32; 4] {
    let [r0, r1, r2, r3] = rows;
    let len = r0.len();
    if r1.len() != len || r2.len() != len || r3.len() != len {
        return rows.map(|r| dot_i8_i16(r, act));
    }
    let n = len.min(act.len());
    let act = act.get(..n).unwrap_or(&[]);
    let cut = |r: &'a [u8]| -> &'a [u8] { r.get(..n).unwrap_or(&[]) };
    let (act_chunks, act_tail) = act.as_chunks::<16>();
    let ((c0, t0), (c1, t1)) = (cut(r0).as_chunks::<16>(), cut(r1).as_chunks::<16>());
    let ((c2, t2), (c3, t3)) = (cut(r2).as_chunks::<16>(), cut(r3).as_chunks::<16>());
    let mut acc = [zero(); 4];
    for ((((a, w0), w1), w2), w3) in act_chunks.iter().zip(c0).zip(c1).zip(c2).zip(c3) {
        let (a_lo, a_hi) = load_act(a);
        for (acc, w) in acc.iter_mut().zip([w0, w1, w2, w3]) {
            *acc = multiply_add(*acc, w, a_lo, a_hi);
        }
    }
    let mut sums = totals(acc);
    if !act_tail.is_empty() {
        for (s, t) in sums.iter_mut().zip([t0, t1, t2, t3]) {
            *s = s.wrapping_add(portable::dot_i8_i16(t, act_tail));
        }
    }
    sums
}

/// [`dot4_i8_i16`] of the same four rows against two activation vectors,
/// `[dot4_i8_i16(rows, acts[0]), dot4_i8_i16(rows, acts[1])]`, with each weight unpacked
/// once for both. Rows of different lengths, or vectors whose common lengths with the rows
/// differ, go one vector at a time.
///
/// ```
/// use inkling_core::engine::kernels::x86_sse2::{dot4_i8_i16, dot4x2_i8_i16};
/// let w: Vec<u8> = (0..4 * 37).map(|i| (i * 53) as u8).collect();
/// let a: Vec<i16> = (0..37).map(|i| (i * 7 - 120) as i16).collect();
/// let b: Vec<i16> = (0..37).map(|i| (i * 11 % 255 - 127) as i16).collect();
/// let rows = [&w[..37], &w[37..74], &w[74..111], &w[111..]];
/// assert_eq!(dot4x2_i8_i16(rows, [&a, &b]), [dot4_i8_i16(rows, &a), dot4_i8_i16(rows, &b)]);
/// ```
#[inline]
pub fn dot4x2_i8_i16<'a>(rows: [&'a [u8]; 4], acts: [&[i16]; 2]) -> [[i32; 4]; 2] {
    let [r0, r1, r2, r3] = rows;
    let [a0, a1] = acts;
    let len = r0.len();
    let n = len.min(a0.len());
    if r1.len() != len || r2.len() != len || r3.len() != len || len.min(a1.len()) != n {
        return [dot4_i8_i16(rows, a0), dot4_i8_i16(rows, a1)];
    }
    let cut = |r: &'a [u8]| -> &'a [u8] { r.get(..n).unwrap_or(&[]) };
    let (a0, a1) = (a0.get(..n).unwrap_or(&[]), a1.get(..n).unwrap_or(&[]));
    let ((a0_chunks, a0_tail), (a1_chunks, a1_tail)) = (a0.as_chunks::<16>(), a1.as_chunks::<16>());
    let ((c0, t0), (c1, t1)) = (cut(r0).as_chunks::<16>(), cut(r1).as_chunks::<16>());
    let ((c2, t2), (c3, t3)) = (cut(r2).as_chunks::<16>(), cut(r3).as_chunks::<16>());
    // Per row, per vector.
    let mut acc = [[zero(); 2]; 4];
    let chunks = a0_chunks
        .iter()
        .zip(a1_chunks)
        .zip(c0)
        .zip(c1)
        .zip(c2)
        .zip(c3);
    for (((((a, b), w0), w1), w2), w3) in chunks {
        let (a_lo, a_hi) = load_act(a);
        let (b_lo, b_hi) = load_act(b);
        for (acc, w) in acc.iter_mut().zip([w0, w1, w2, w3]) {
            let (w_lo, w_hi) = unpack(w);
            acc[0] = add_products(acc[0], w_lo, w_hi, a_lo, a_hi);
            acc[1] = add_products(acc[1], w_lo, w_hi, b_lo, b_hi);
        }
    }
    let [r0, r1, r2, r3] = acc;
    let mut sums = [
        totals([r0[0], r1[0], r2[0], r3[0]]),
        totals([r0[1], r1[1], r2[1], r3[1]]),
    ];
    if !a0_tail.is_empty() {
        for (s, a) in sums.iter_mut().zip([a0_tail, a1_tail]) {
            for (s, t) in s.iter_mut().zip([t0, t1, t2, t3]) {
                *s = s.wrapping_add(portable::dot_i8_i16(t, a));
            }
        }
    }
    sums
}

/// Sixteen activations as two registers of eight i16.
#[inline(always)]
fn load_act(a: &[i16; 16]) -> (__m128i, __m128i) {
    // SAFETY: `a` is 16 readable i16 (32 bytes); the loads are unaligned loads, valid for any
    // address. SSE2 is part of the x86-64 baseline.
    unsafe {
        let lo = _mm_loadu_si128(a.as_ptr().cast::<__m128i>());
        let hi = _mm_loadu_si128(a.as_ptr().add(8).cast::<__m128i>());
        (lo, hi)
    }
}

/// `acc` plus the sixteen products of the int8 weights `w` and the activations, summed in
/// pairs into the four i32 lanes.
#[inline(always)]
fn multiply_add(acc: __m128i, w: &[u8; 16], a_lo: __m128i, a_hi: __m128i) -> __m128i {
    let (w_lo, w_hi) = unpack(w);
    add_products(acc, w_lo, w_hi, a_lo, a_hi)
}

/// Sixteen int8 weights sign-extended to two registers of eight i16.
#[inline(always)]
fn unpack(w: &[u8; 16]) -> (__m128i, __m128i) {
    // SAFETY: `w` is 16 readable bytes; the load is an unaligned load, valid for any address.
    // The rest are register operations. SSE2 is part of the x86-64 baseline.
    unsafe {
        let w = _mm_loadu_si128(w.as_ptr().cast::<__m128i>());
        // Each byte paired with its sign byte (all ones where negative): the int8 weights
        // sign-extended to i16, with one compare where two shifts would be needed.
        let sign = _mm_cmpgt_epi8(_mm_setzero_si128(), w);
        (_mm_unpacklo_epi8(w, sign), _mm_unpackhi_epi8(w, sign))
    }
}

/// `acc` plus the sixteen products of unpacked weights and activations, summed in pairs
/// into the four i32 lanes.
#[inline(always)]
fn add_products(
    acc: __m128i,
    w_lo: __m128i,
    w_hi: __m128i,
    a_lo: __m128i,
    a_hi: __m128i,
) -> __m128i {
    // SAFETY: register-only SSE2 operations (part of the x86-64 baseline).
    unsafe {
        let s = _mm_add_epi32(_mm_madd_epi16(w_lo, a_lo), _mm_madd_epi16(w_hi, a_hi));
        _mm_add_epi32(acc, s)
    }
}

/// The totals of four accumulators of four i32 lanes each: lane `k` of the result, summed
/// from accumulator `k` by a transpose-and-add.
#[inline(always)]
fn totals(acc: [__m128i; 4]) -> [i32; 4] {
    let [a0, a1, a2, a3] = acc;
    let mut sums = [0i32; 4];
    // SAFETY: register-only SSE2 operations, then an unaligned store of 16 bytes into
    // `sums`, which is 16 bytes.
    unsafe {
        let s01 = _mm_add_epi32(_mm_unpacklo_epi32(a0, a1), _mm_unpackhi_epi32(a0, a1));
        let s23 = _mm_add_epi32(_mm_unpacklo_epi32(a2, a3), _mm_unpackhi_epi32(a2, a3));
        let s = _mm_add_epi32(_mm_unpacklo_epi64(s01, s23), _mm_unpackhi_epi64(s01, s23));
        _mm_storeu_si128(sums.as_mut_ptr().cast::<__m128i>(), s);
    }
    sums
}

/// An all-zero SSE register.
fn zero() -> __m128i {
    // SAFETY: SSE2 is part of the x86-64 baseline; this only sets a register.
    unsafe { _mm_setzero_si128() }
}
