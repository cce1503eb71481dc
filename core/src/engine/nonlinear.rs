//! The scalar functions of the model, in f32 through `libm` so that every target computes
//! the same bits.

/// SiLU: `x · σ(x) = x / (1 + e^(−x))`.
///
/// ```
/// use inkling_core::engine::nonlinear::silu;
/// assert_eq!(silu(0.0), 0.0);
/// assert!((silu(1.0) - 0.731_058_6).abs() < 1e-6);
/// ```
#[inline]
pub fn silu(x: f32) -> f32 {
    x / (1.0 + libm::expf(-x))
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
        libm::log1pf(libm::expf(x))
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
