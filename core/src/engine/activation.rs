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
/// A vector of zeros, or one holding NaN or infinity, gets scale 0 and all-zero `q`, so
/// such a value never spreads through the integer products.
///
/// ```
/// use inkling_core::engine::activation::quantise;
/// let mut q = [0i16; 3];
/// let scale = quantise(&[0.5, -1.0, 0.25], &mut q);
/// assert_eq!(q, [64, -127, 32]); // 63.5 and 31.75 round to the nearest, ties to even
/// assert!((scale - 1.0 / 127.0).abs() < 1e-9);
/// ```
pub fn quantise(x: &[f32], q: &mut [i16]) -> f32 {
    let mut amax = 0.0f32;
    for &v in x {
        amax = amax.max(libm::fabsf(v));
    }
    if !(amax.is_finite() && amax > 0.0) {
        q.iter_mut().for_each(|v| *v = 0);
        return 0.0;
    }
    let inv = ACT_MAX / amax;
    for (o, &v) in q.iter_mut().zip(x) {
        // |v · inv| ≤ 127: adding and subtracting 1.5·2^23 rounds it to the nearest integer
        // (ties to even) with two IEEE additions, the same bits on every target.
        *o = ((v * inv + ROUNDER) - ROUNDER).clamp(-ACT_MAX, ACT_MAX) as i16;
    }
    amax / ACT_MAX
}
