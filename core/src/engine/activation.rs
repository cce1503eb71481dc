//! Dynamic, symmetric, per-vector int8 quantisation of activations.

/// The largest magnitude of a quantised activation.
///
/// ```
/// use inkling_core::engine::activation::{quantise, ACT_MAX};
/// let mut q = [0i16; 2];
/// quantise(&[-3.0, 1.5], &mut q);
/// assert_eq!(q, [-ACT_MAX as i16, 64]); // the largest magnitude maps to ±ACT_MAX
/// ```
pub const ACT_MAX: f32 = 127.0;

/// 1.5 · 2^23: see [`quantise`].
const ROUNDER: f32 = 12_582_912.0;

/// Quantises `x` to integers in `-127..=127` (stored as i16, ready for 16-bit multiply-
/// accumulate), with one scale for the whole vector: `x ≈ q · scale`. Returns the scale.
///
/// A vector of zeros (or of magnitudes all below about 3.8e-37, whose reciprocal would
/// overflow), or one holding NaN or infinity, gets scale 0 and all-zero `q`, so such a value
/// never spreads through the integer products.
///
/// ```
/// use inkling_core::engine::activation::quantise;
/// let mut q = [0i16; 3];
/// let scale = quantise(&[0.5, -1.0, 0.25], &mut q);
/// assert_eq!(q, [64, -127, 32]); // 63.5 and 31.75 round to the nearest, ties to even
/// assert!((scale - 1.0 / 127.0).abs() < 1e-9);
/// ```
pub fn quantise(x: &[f32], q: &mut [i16]) -> f32 {
    // The largest |v| from the bit patterns: for non-NaN floats the order of `bits & 0x7FFF_FFFF`
    // as integers is the order of |v|, and every NaN lies above infinity, so one integer max
    // (no float NaN rules, and it vectorises) finds the magnitude and any NaN or infinity.
    let mut top = 0u32;
    for &v in x {
        top = top.max(v.to_bits() & 0x7FFF_FFFF);
    }
    let amax = f32::from_bits(top);
    let inv = ACT_MAX / amax;
    // Also refused: a largest magnitude so small (below 3.8e-37) that 127 / amax overflows.
    if top == 0 || top >= f32::INFINITY.to_bits() || !inv.is_finite() {
        q.iter_mut().for_each(|v| *v = 0);
        return 0.0;
    }
    for (o, &v) in q.iter_mut().zip(x) {
        // |v · inv| ≤ 127 (v is finite and at most amax): adding 1.5·2^23 rounds it to the
        // nearest integer (ties to even), which then sits in the low bits of the sum. Two IEEE
        // operations and an integer subtraction, the same bits on every target.
        *o = ((v * inv + ROUNDER).to_bits() as i32 - ROUNDER.to_bits() as i32) as i16;
    }
    amax / ACT_MAX
}

#[cfg(test)]
mod tests {
    use super::{quantise, ACT_MAX};

    #[test]
    fn rounds_to_nearest_even_like_ieee() {
        // Reference: IEEE 754 roundTiesToEven (`f32::round_ties_even`) of v · 127 / max|v|.
        let mut seed = 0x2545_f491u32;
        for _ in 0..2000 {
            let x: [f32; 37] = core::array::from_fn(|_| {
                seed = seed.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
                (seed >> 8) as f32 / (1u32 << 24) as f32 * 6.0 - 3.0
            });
            let mut q = [0i16; 37];
            let scale = quantise(&x, &mut q);
            let amax = x.iter().fold(0.0f32, |m, v| m.max(v.abs()));
            assert_eq!(scale, amax / ACT_MAX);
            for (&v, &got) in x.iter().zip(&q) {
                let want = (v * (ACT_MAX / amax)).round_ties_even();
                assert_eq!(f32::from(got), want, "value {v}");
            }
        }
    }

    #[test]
    fn nan_infinity_zero_and_tiny_vectors_give_zeros() {
        for bad in [
            [1.0, f32::NAN, 2.0],
            [f32::INFINITY, 1.0, 0.0],
            [0.0, -f32::INFINITY, 1.0],
            [0.0, -0.0, 0.0],
            [1e-38, -2e-38, 0.0],
        ] {
            let mut q = [5i16; 3];
            assert_eq!(quantise(&bad, &mut q), 0.0, "{bad:?}");
            assert_eq!(q, [0; 3], "{bad:?}");
        }
        // Just above the limit still quantises: 2^-120 ≈ 7.5e-37 and -2^-121 (-63.5 → -64).
        let (big, half) = (f32::from_bits(7 << 23), -f32::from_bits(6 << 23));
        let mut q = [0i16; 2];
        assert!(quantise(&[big, half], &mut q) > 0.0);
        assert_eq!(q, [127, -64]);
    }
}
