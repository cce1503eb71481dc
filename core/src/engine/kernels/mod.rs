//! The integer inner loops of the matrix-vector products, one module per kind of core.
//!
//! - [`portable`]: plain Rust, written in fixed-size chunks so that the compiler turns it into
//!   SIMD on the workstation; it also serves every core without the kernels below.
//! - `x86_sse2`: SSE2 16-bit multiply-add (in every x86-64 core), 16 columns at a time, one
//!   row, four rows against one vector or four rows against two.
//! - `cortex_m4`: SXTB16 + SMLAD (two 16-bit multiply-accumulates per instruction) through
//!   inline assembly, four weight rows per pass against one vector or one row against two,
//!   with the f32 rescale in the assembly, on 32-bit Arm cores with the DSP extension.
//!
//! Every kernel returns the exact integer sums (mod 2^32) of the portable one, so the f32
//! results built on them are the same bits on every target.

#[cfg(all(target_arch = "arm", target_abi = "eabihf"))]
#[allow(unsafe_code)] // inline assembly
pub mod cortex_m4;
pub mod portable;
#[cfg(target_arch = "x86_64")]
#[allow(unsafe_code)] // SSE2 intrinsics
pub mod x86_sse2;
