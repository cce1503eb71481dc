//! The scalar functions of the model, in f32.
//!
//! Every target must compute the same bits, so these use only IEEE 754 basic operations
//! (which Rust never fuses or reorders) and `libm`, never a platform's own maths library.
//! The exponential, which the selective scan needs `I·N` times per block and byte, is
//! [`exp`]: a range reduction and a polynomial, several times cheaper than `libm::expf`
//! on a Cortex-M4F and within 2 ulp of it.

/// `log2(e)`.
const LOG2_E: f32 = core::f32::consts::LOG2_E;
/// `ln 2` split in two so that `n · LN2_HI` is exact for the `n` that occur (Cody & Waite).
const LN2_HI: f32 = 0.693_145_75;
/// The rest of `ln 2`.
const LN2_LO: f32 = 1.428_606_8e-6;
/// Adding and subtracting this rounds an f32 below 2^22 to the nearest integer.
const ROUNDER: f32 = 12_582_912.0;

/// `e^x` in f32 by Cody–Waite range reduction (`x = n·ln 2 + r`, |r| ≤ ln 2 / 2) and a
/// degree-6 Taylor polynomial for `e^r`, scaled by `2^n` through the exponent bits.
/// Relative error below 3e-7 over `[−87.3, 88.7]`. Inputs are first clamped to that range
/// (so below it the result is e^−87.3 ≈ 1.2e−38 rather than a subnormal, and above it
/// e^88.7 ≈ 3.3e38); NaN gives NaN. No branch, so loops of it vectorise.
///
/// ```
/// use inkling_core::engine::nonlinear::exp;
/// assert_eq!(exp(0.0), 1.0);
/// assert!((exp(1.0) - core::f32::consts::E).abs() < 1e-6);
/// assert!(exp(-100.0) < 1.3e-38);
/// ```
#[inline]
pub fn exp(x: f32) -> f32 {
    // Comparisons, not `max`/`min` (whose NaN rules cost a dozen instructions on a core
    // without IEEE 754-2008 min/max): each is one compare and select, and NaN passes through.
    let x = if x < -87.3 { -87.3 } else { x };
    let x = if x > 88.7 { 88.7 } else { x };
    let shifted = x * LOG2_E + ROUNDER;
    let n = shifted - ROUNDER;
    let r = (x - n * LN2_HI) - n * LN2_LO;
    let p = 1.0
        + r * (1.0
            + r * (0.5
                + r * (1.0 / 6.0 + r * (1.0 / 24.0 + r * (1.0 / 120.0 + r * (1.0 / 720.0))))));
    // n is an integer in [-126, 128], and `shifted` holds it in its low mantissa bits: read
    // it from there (integer work only, no float-to-int conversion). 2^n has exponent bits
    // n + 127; split in two factors so that n = 128 still makes finite powers.
    let k = shifted.to_bits() as i32 - ROUNDER.to_bits() as i32;
    let half = k >> 1;
    let pow = |e: i32| f32::from_bits(((e + 127) as u32) << 23);
    p * pow(half) * pow(k - half)
}

/// SiLU: `x · σ(x) = x / (1 + e^(−x))`.
///
/// ```
/// use inkling_core::engine::nonlinear::silu;
/// assert_eq!(silu(0.0), 0.0);
/// assert!((silu(1.0) - 0.731_058_6).abs() < 1e-6);
/// ```
#[inline]
pub fn silu(x: f32) -> f32 {
    x / (1.0 + exp(-x))
}

/// Softplus: `ln(1 + e^x)`, exact to f32 for large `x` (where it equals `x`).
///
/// ```
/// use inkling_core::engine::nonlinear::softplus;
/// assert!((softplus(0.0) - core::f32::consts::LN_2).abs() < 1e-7);
/// assert_eq!(softplus(40.0), 40.0);
/// ```
#[inline]
pub fn softplus(x: f32) -> f32 {
    // Above 20, e^-x < 2e-9 is below f32's resolution of x.
    if x > 20.0 {
        x
    } else {
        libm::log1pf(exp(x))
    }
}

/// RMS norm: `out = v / sqrt(mean(v²) + eps) · weight`.
///
/// ```
/// use inkling_core::engine::nonlinear::rms_norm;
/// use inkling_core::image::views::Floats;
/// let mut out = [0.0; 2];
/// rms_norm(&[3.0, 4.0], Floats::Native(&[1.0, 2.0]), 0.0, &mut out);
/// let rms = (12.5f32).sqrt();
/// assert!((out[0] - 3.0 / rms).abs() < 1e-6 && (out[1] - 8.0 / rms).abs() < 1e-6);
/// ```
pub fn rms_norm(v: &[f32], weight: crate::image::views::Floats<'_>, eps: f32, out: &mut [f32]) {
    let mut sum = 0.0f32;
    for &x in v {
        sum += x * x;
    }
    let inv = 1.0 / libm::sqrtf(sum / v.len().max(1) as f32 + eps);
    for ((o, &x), w) in out.iter_mut().zip(v).zip(weight.iter()) {
        *o = x * inv * w;
    }
}

#[cfg(test)]
mod tests {
    use super::exp;

    #[test]
    fn exp_matches_libm_to_3e7_relative() {
        // Reference: libm's expf (a port of the FreeBSD/musl correctly-rounded-in-practice
        // implementation). Sweep the whole usable range.
        let mut worst = 0.0f64;
        let mut x = -87.0f32;
        while x < 88.5 {
            let want = f64::from(libm::expf(x));
            let got = f64::from(exp(x));
            worst = worst.max(((got - want) / want).abs());
            x += 0.000_73;
        }
        assert!(worst < 3e-7, "worst relative error {worst}");
    }

    #[test]
    fn exp_edges_are_clamped_and_finite() {
        assert_eq!(exp(1000.0), exp(88.7));
        assert!(exp(88.7).is_finite() && exp(88.7) > 3.0e38);
        assert_eq!(exp(-1000.0), exp(-87.3));
        assert!(exp(-87.3) > 0.0 && exp(-87.3) < 1.3e-38);
        assert!(exp(f32::NAN).is_nan());
        assert_eq!(exp(f32::NEG_INFINITY), exp(-87.3));
    }
}
