//! The scalar functions of the model, in f32.
//!
//! Every target must compute the same bits, so these use only IEEE 754 basic operations
//! (which Rust never fuses or reorders), integer work and `libm::sqrtf` (correctly
//! rounded), never a platform's own maths library. Every exponential goes through
//! [`exp2_nonpositive`], a rounding and a polynomial: the selective scan needs `I·N` of them
//! per block and byte, SiLU and softplus one per channel.

use crate::image::views::FloatRun;

/// `log2(e)`.
const LOG2_E: f32 = core::f32::consts::LOG2_E;
/// Adding and subtracting this rounds an f32 below 2^22 to the nearest integer.
const ROUNDER: f32 = 12_582_912.0;

/// Coefficients of `2^f ≈ 1 + f·(c1 + f·(c2 + f·(c3 + f·(c4 + f·c5))))` on `[-0.5, 0.5]`:
/// fitted (relative-error weighted least squares on Chebyshev nodes, with numpy) so that,
/// evaluated in f32, the relative error stays below 1.8e-7 over the interval.
#[expect(
    clippy::approx_constant,
    reason = "c1 is fitted, near ln 2 but not ln 2"
)]
const EXP2_POLY: [f32; 5] = [
    0.693_147,
    0.240_222_42,
    0.055_507_217,
    0.009_671_511,
    0.001_326_821_4,
];

/// `2^y` for `y ≤ 0`: the decay factor of the selective scan, `exp(Δ·A) = 2^(Δ·log2(e)·A)`,
/// needed `I·N` times per block and byte, so it is cut to the bone: no Cody–Waite step (with
/// `n` the nearest integer, `y − n` is exact), a degree-5 polynomial, and `2^n` put straight
/// into the exponent bits. Relative error below 3e-7 against `libm::exp2f` on `[−126, 0]`.
/// Below −126 the result stays at about `2^−126` (not a subnormal); above 0 it is valid up
/// to 127 and meaningless past it; NaN gives an unspecified finite or NaN value. IEEE basic
/// operations and integer work only: the same bits on every target, and loops of it vectorise.
///
/// ```
/// use inkling_core::engine::nonlinear::exp2_nonpositive;
/// assert_eq!(exp2_nonpositive(0.0), 1.0);
/// assert_eq!(exp2_nonpositive(-3.0), 0.125);
/// assert!((exp2_nonpositive(-0.5) - core::f32::consts::FRAC_1_SQRT_2).abs() < 2e-7);
/// assert!(exp2_nonpositive(-1000.0) > 0.0);
/// ```
#[inline]
pub fn exp2_nonpositive(y: f32) -> f32 {
    let y = if y < -126.0 { -126.0 } else { y };
    let shifted = y + ROUNDER;
    let f = y - (shifted - ROUNDER);
    let [c1, c2, c3, c4, c5] = EXP2_POLY;
    let p = 1.0 + f * (c1 + f * (c2 + f * (c3 + f * (c4 + f * c5))));
    // `shifted`'s bits are those of 1.5·2^23 plus n, and 1.5·2^23's low nine bits are zero,
    // so shifting them up by 23 leaves n in the exponent field: add the bias for 2^n.
    let pow = f32::from_bits((shifted.to_bits() << 23).wrapping_add(127 << 23));
    p * pow
}

/// `e^(−|x|)` through [`exp2_nonpositive`]: for SiLU and softplus, which need it once per
/// channel, so the argument's rounding (`|x|·log2(e)`, relative 6e-8) costs at most
/// about `|x|`·1e-7 of relative error.
#[inline]
fn exp_neg_abs(x: f32) -> f32 {
    exp2_nonpositive(-(libm::fabsf(x) * LOG2_E))
}

/// SiLU: `x · σ(x) = x / (1 + e^(−x))`, computed as `x / (1 + e)` for `x ≥ 0` and
/// `x·e / (1 + e)` below, with `e = e^(−|x|)`, so the exponential never overflows. Within
/// 1.2e-6 relative of the float64 formula on `[−20, 20]`, 4e-6 on `[−80, 80]`.
///
/// ```
/// use inkling_core::engine::nonlinear::silu;
/// assert_eq!(silu(0.0), 0.0);
/// assert!((silu(1.0) - 0.731_058_6).abs() < 1e-6);
/// assert!((silu(-1.0) + 0.268_941_4).abs() < 1e-6);
/// ```
#[inline]
pub fn silu(x: f32) -> f32 {
    let e = exp_neg_abs(x);
    let top = if x < 0.0 { x * e } else { x };
    top / (1.0 + e)
}

/// Softplus: `ln(1 + e^x) = max(x, 0) + ln(1 + u)`, `u = e^(−|x|) ∈ (0, 1]`, and
/// `ln(1 + u) = 2·atanh(s)` with `s = u / (2 + u) ≤ 1/3`, summed as its odd series to `s^13`
/// (the next term is below 1.5e-8 of the sum): no cancellation for small `u`, no logarithm
/// call. Equal to `x` for large `x`; within 1.2e-6 relative of the float64 formula on
/// `[−20, 20]`, 4e-6 on `[−80, 80]`.
///
/// ```
/// use inkling_core::engine::nonlinear::softplus;
/// assert!((softplus(0.0) - core::f32::consts::LN_2).abs() < 1e-7);
/// assert_eq!(softplus(40.0), 40.0);
/// assert!((softplus(-20.0) - 2.061_153_6e-9).abs() < 1e-14);
/// ```
#[inline]
pub fn softplus(x: f32) -> f32 {
    let positive = if x > 0.0 { x } else { 0.0 };
    positive + ln_1p_unit(exp_neg_abs(x))
}

/// `ln(1 + u)` for `u` in `[0, 1]`, with no logarithm call: `2·atanh(s)`, `s = u / (2 + u) ≤ 1/3`,
/// summed as its odd series to `s^13` (the next term is below 1.5e-8 of the sum), so there is
/// no cancellation for small `u`. The logarithm of [`softplus`]; the trainer uses it too, so
/// that its softplus is the engine's. Outside `[0, 1]` the series is cut too short to be right.
///
/// ```
/// use inkling_core::engine::nonlinear::ln_1p_unit;
/// assert_eq!(ln_1p_unit(0.0), 0.0);
/// assert!((ln_1p_unit(1.0) - core::f32::consts::LN_2).abs() < 1e-7);
/// assert!((ln_1p_unit(1e-8) - 1e-8).abs() < 1e-15);
/// ```
#[inline]
pub fn ln_1p_unit(u: f32) -> f32 {
    let s = u / (2.0 + u);
    let z = s * s;
    let series = 1.0
        + z * (1.0 / 3.0
            + z * (1.0 / 5.0
                + z * (1.0 / 7.0 + z * (1.0 / 9.0 + z * (1.0 / 11.0 + z * (1.0 / 13.0))))));
    2.0 * s * series
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
pub fn rms_norm(v: &[f32], weight: impl FloatRun, eps: f32, out: &mut [f32]) {
    let mut sum = 0.0f32;
    for &x in v {
        sum += x * x;
    }
    let inv = 1.0 / libm::sqrtf(sum / v.len().max(1) as f32 + eps);
    for ((o, &x), w) in out.iter_mut().zip(v).zip(weight.values()) {
        *o = x * inv * w;
    }
}

#[cfg(test)]
mod tests {
    use super::{exp2_nonpositive, silu, softplus};

    #[test]
    fn exp2_nonpositive_matches_libm_to_3e7_relative() {
        // Reference: libm's exp2f (the FreeBSD/musl implementation), over the whole range.
        let mut worst = 0.0f64;
        let mut y = -126.0f32;
        while y <= 0.0 {
            let want = f64::from(libm::exp2f(y));
            let got = f64::from(exp2_nonpositive(y));
            worst = worst.max(((got - want) / want).abs());
            y += 0.000_37;
        }
        assert!(worst < 3e-7, "worst relative error {worst}");
        // Exact powers of two come out exact; the clamp holds below the range.
        for n in 0..=126 {
            assert_eq!(exp2_nonpositive(-(n as f32)), libm::exp2f(-(n as f32)));
        }
        assert_eq!(exp2_nonpositive(-1e30), exp2_nonpositive(-126.0));
        assert_eq!(
            exp2_nonpositive(f32::NEG_INFINITY),
            exp2_nonpositive(-126.0)
        );
    }

    #[test]
    fn silu_and_softplus_match_float64_formulas() {
        // Reference: the definitions evaluated in f64 with std's exp and ln_1p.
        // [worst on [-20, 20], worst on [-80, 80]] for each.
        let (mut worst_silu, mut worst_softplus) = ([0.0f64; 2], [0.0f64; 2]);
        let mut x = -80.0f32;
        while x < 80.0 {
            let wide = usize::from(x.abs() > 20.0);
            let v = f64::from(x);
            let silu_want = v / (1.0 + (-v).exp());
            let softplus_want = if v > 0.0 {
                v + (-v).exp().ln_1p()
            } else {
                v.exp().ln_1p()
            };
            let rel = |got: f32, want: f64| {
                if want == 0.0 {
                    f64::from(got).abs()
                } else {
                    ((f64::from(got) - want) / want).abs()
                }
            };
            worst_silu[wide] = worst_silu[wide].max(rel(silu(x), silu_want));
            worst_softplus[wide] = worst_softplus[wide].max(rel(softplus(x), softplus_want));
            x += 0.000_91;
        }
        assert!(
            worst_silu[0] < 1.2e-6 && worst_silu[1] < 4e-6,
            "silu: {worst_silu:?}"
        );
        assert!(
            worst_softplus[0] < 1.2e-6 && worst_softplus[1] < 4e-6,
            "softplus: {worst_softplus:?}"
        );
        assert!(silu(f32::NAN).is_nan() && softplus(f32::NAN).is_nan());
        assert_eq!(softplus(1e30), 1e30);
        assert_eq!(silu(1e30), 1e30);
    }
}
