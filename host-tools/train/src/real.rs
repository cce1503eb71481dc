//! The float type the model math is written over: f32 for training, f64 for the
//! gradient check (so that finite differences are not drowned in rounding).

use std::fmt::Debug;
use std::ops::{Add, AddAssign, Div, Mul, MulAssign, Neg, Sub, SubAssign};

pub trait Real:
    Copy
    + Send
    + Sync
    + Default
    + Debug
    + PartialOrd
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
    + AddAssign
    + SubAssign
    + MulAssign
    + 'static
{
    const ZERO: Self;
    const ONE: Self;
    fn from_f64(v: f64) -> Self;
    fn to_f64(self) -> f64;
    fn exp(self) -> Self;
    fn ln(self) -> Self;
    fn ln_1p(self) -> Self;
    fn sqrt(self) -> Self;
    fn abs(self) -> Self;
    fn max(self, other: Self) -> Self;
    /// exp of a non-positive argument, as used by the scan's decay factor.
    /// For f32 this is a branch-free polynomial the compiler can vectorise.
    fn exp_nonpositive(self) -> Self;
    /// ln(1 + self) for self in [0, 1] (softplus). For f32 a polynomial, no libm call.
    fn ln_1p_unit(self) -> Self;

    /// C = alpha·A·B + beta·C with arbitrary strides (matrixmultiply's
    /// sgemm/dgemm contract).
    ///
    /// # Safety
    /// Every index `r*rs + c*cs` the shapes reach must lie inside the buffers.
    #[allow(clippy::too_many_arguments)]
    unsafe fn gemm_raw(
        m: usize,
        k: usize,
        n: usize,
        alpha: Self,
        a: *const Self,
        rsa: isize,
        csa: isize,
        b: *const Self,
        rsb: isize,
        csb: isize,
        beta: Self,
        c: *mut Self,
        rsc: isize,
        csc: isize,
    );
}

/// One `Real` impl: the methods forward to the type's own, but for the two kernels
/// given (f32 has polynomial ones the compiler can vectorise) and the gemm routine.
macro_rules! impl_real {
    ($t:ident, $gemm:path, exp_nonpositive: $exp_np:expr, ln_1p_unit: $ln1p_unit:expr) => {
        impl Real for $t {
            const ZERO: Self = 0.0;
            const ONE: Self = 1.0;
            fn from_f64(v: f64) -> Self {
                v as $t
            }
            fn to_f64(self) -> f64 {
                self as f64
            }
            fn exp(self) -> Self {
                $t::exp(self)
            }
            fn ln(self) -> Self {
                $t::ln(self)
            }
            fn ln_1p(self) -> Self {
                $t::ln_1p(self)
            }
            fn sqrt(self) -> Self {
                $t::sqrt(self)
            }
            fn abs(self) -> Self {
                $t::abs(self)
            }
            fn max(self, other: Self) -> Self {
                $t::max(self, other)
            }
            #[inline(always)]
            fn exp_nonpositive(self) -> Self {
                $exp_np(self)
            }
            #[inline(always)]
            fn ln_1p_unit(self) -> Self {
                $ln1p_unit(self)
            }
            unsafe fn gemm_raw(
                m: usize,
                k: usize,
                n: usize,
                alpha: Self,
                a: *const Self,
                rsa: isize,
                csa: isize,
                b: *const Self,
                rsb: isize,
                csb: isize,
                beta: Self,
                c: *mut Self,
                rsc: isize,
                csc: isize,
            ) {
                // SAFETY: forwarded contract of this function.
                unsafe { $gemm(m, k, n, alpha, a, rsa, csa, b, rsb, csb, beta, c, rsc, csc) }
            }
        }
    };
}

impl_real!(
    f32,
    matrixmultiply::sgemm,
    exp_nonpositive: exp_f32_nonpositive,
    ln_1p_unit: inkling_core::engine::nonlinear::ln_1p_unit
);
impl_real!(
    f64,
    matrixmultiply::dgemm,
    exp_nonpositive: f64::exp,
    ln_1p_unit: f64::ln_1p
);

/// exp(x) for x ≤ 0 without branches or libm calls: x = k·ln2 + f with
/// |f| ≤ ln2/2 (Cody–Waite range reduction), e^f by its Taylor polynomial to
/// degree 6 (truncation error < 2e-7 relative on that interval), 2^k built in
/// the exponent bits. Arguments below -87 flush to 0 (the f32 normal range).
#[inline(always)]
fn exp_f32_nonpositive(x: f32) -> f32 {
    const LN2_HI: f32 = 0.693_145_75;
    const LN2_LO: f32 = 1.428_606_8e-6;
    let x = x.max(-87.0);
    // round-to-nearest of x/ln2 by the 1.5·2^23 trick (f32::round is a libm call).
    let shifter = 12_582_912.0f32;
    let kf = (x * std::f32::consts::LOG2_E + shifter) - shifter;
    let f = (x - kf * LN2_HI) - kf * LN2_LO;
    let p = 1.0
        + f * (1.0
            + f * (0.5
                + f * (1.0 / 6.0 + f * (1.0 / 24.0 + f * (1.0 / 120.0 + f * (1.0 / 720.0))))));
    let scale = f32::from_bits((((kf as i32) + 127) as u32) << 23);
    p * scale
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fast_exp_matches_std_exp() {
        // Reference: the standard library's exp (correctly rounded to within 1 ulp).
        let mut x = -87.0f32;
        while x <= 0.0 {
            let want = x.exp();
            let got = exp_f32_nonpositive(x);
            assert!(
                (got - want).abs() <= 4e-7 * want,
                "exp({x}): {got} vs {want}"
            );
            x += 0.001_7;
        }
        // Reference: the standard library's ln_1p.
        let mut e = 0.0f32;
        while e <= 1.0 {
            let (got, want) = (inkling_core::engine::nonlinear::ln_1p_unit(e), e.ln_1p());
            assert!(
                (got - want).abs() <= 3e-7 * want.max(1e-30),
                "ln_1p({e}): {got} vs {want}"
            );
            e += 0.000_37;
        }
        // Far below the range: the clamp gives the smallest normal power of two, not NaN.
        assert!(exp_f32_nonpositive(-1000.0) < 2e-38);
    }
}
