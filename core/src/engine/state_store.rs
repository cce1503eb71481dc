//! Where an engine state lives between steps: f32 values, or 16-bit floats (IEEE 754
//! binary16) widened to f32 one block at a time while a step runs.
//!
//! A step works on each block's state in f32 ([`StateStore::with_block`]). A state kept in
//! 16-bit floats takes half the RAM; each value is rounded to the nearest binary16 (ties to
//! even) after every byte, so such a state can only take one byte a pass (the rounding is part
//! of its sequence of operations, and it must not depend on how bytes are grouped). The
//! conversions are exact IEEE operations: the Cortex-M4F's own `VCVTB`/`VCVTT` instructions
//! and the `half` crate's conversions on the workstation give the same bits.

use crate::error::Error;
use crate::image::dims::Dims;

/// An engine state in some storage, handed to the engine one block at a time in f32.
///
/// ```
/// use inkling_core::engine::state_store::StateStore;
/// let mut state = [0.0f32; 6];
/// state.with_block(1, 3, |block| block[0] = 2.0);
/// assert_eq!(state, [0.0, 0.0, 0.0, 2.0, 0.0, 0.0]);
/// assert!(StateStore::takes_passes(&state[..]));
/// ```
pub trait StateStore {
    /// Values of the whole state.
    fn state_len(&self) -> usize;
    /// Whether several bytes may go through in one pass (false: one byte a pass).
    fn takes_passes(&self) -> bool;
    /// Runs `f` on the `per_block` values of block `l` as f32 and keeps what it leaves.
    fn with_block(&mut self, l: usize, per_block: usize, f: impl FnOnce(&mut [f32]));
}

impl StateStore for [f32] {
    fn state_len(&self) -> usize {
        self.len()
    }

    fn takes_passes(&self) -> bool {
        true
    }

    fn with_block(&mut self, l: usize, per_block: usize, f: impl FnOnce(&mut [f32])) {
        if let Some(block) = self.get_mut(l * per_block..(l + 1) * per_block) {
            f(block);
        }
    }
}

/// A state held as binary16 bit patterns, with f32 work space for one block.
///
/// ```
/// use inkling_core::engine::state_store::{HalfState, StateStore};
/// use inkling_core::image::example::TINY_DIMS as D;
/// let mut bits = vec![0u16; D.state_len()];
/// let mut work = vec![0.0f32; D.state_len() / D.blocks];
/// let mut state = HalfState::new(&D, &mut bits, &mut work)?;
/// state.with_block(0, D.state_len(), |block| block[0] = 1.0 / 3.0);
/// // 1/3 rounded to binary16: 0x3555 (0.333251953125)
/// assert_eq!(bits[0], 0x3555);
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug)]
pub struct HalfState<'a> {
    bits: &'a mut [u16],
    work: &'a mut [f32],
    /// Whether several bytes may go through in one pass (rounded at the end of the pass).
    passes: bool,
}

impl<'a> HalfState<'a> {
    /// A state of `dims` in `bits` (at least [`Dims::state_len`]), with `work` of at least one
    /// block's values ([`Dims::block_state_len`]).
    ///
    /// ```
    /// use inkling_core::engine::state_store::HalfState;
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// let (mut bits, mut work) = (vec![0u16; D.state_len()], vec![0.0f32; 4]);
    /// assert!(HalfState::new(&D, &mut bits, &mut work).is_err()); // work space too small
    /// ```
    pub fn new(dims: &Dims, bits: &'a mut [u16], work: &'a mut [f32]) -> Result<Self, Error> {
        super::buffers::check_len("state", dims.state_len(), bits.len())?;
        super::buffers::check_len("state work", dims.block_state_len(), work.len())?;
        let bits = bits.get_mut(..dims.state_len()).unwrap_or(&mut []);
        Ok(HalfState {
            bits,
            work,
            passes: false,
        })
    }

    /// The same state, taking several bytes a pass and rounded to 16 bits at the end of
    /// each pass rather than after every byte: for a pass whose state is thrown away (a
    /// phrase draft's verification), where the rounding need not match typing.
    pub(crate) fn in_passes(self) -> Self {
        HalfState {
            passes: true,
            ..self
        }
    }
}

impl StateStore for HalfState<'_> {
    fn state_len(&self) -> usize {
        self.bits.len()
    }

    fn takes_passes(&self) -> bool {
        self.passes
    }

    fn with_block(&mut self, l: usize, per_block: usize, f: impl FnOnce(&mut [f32])) {
        let (Some(bits), Some(work)) = (
            self.bits.get_mut(l * per_block..(l + 1) * per_block),
            self.work.get_mut(..per_block),
        ) else {
            return;
        };
        widen(bits, work);
        f(work);
        narrow(work, bits);
    }
}

/// `out[i] = bits[i]` as binary16, widened to f32 (exact), over the common length.
///
/// ```
/// let mut out = [0.0f32; 3];
/// inkling_core::engine::state_store::widen(&[0x3c00, 0xc000, 0x0001], &mut out);
/// assert_eq!(out, [1.0, -2.0, 2f32.powi(-24)]);
/// ```
pub fn widen(bits: &[u16], out: &mut [f32]) {
    let n = bits.len().min(out.len());
    #[cfg(all(target_arch = "arm", target_abi = "eabihf"))]
    {
        let pairs = n / 2;
        arm::widen_pairs(bits, out, pairs);
        if let (Some(&b), Some(o)) = (bits.get(2 * pairs), out.get_mut(2 * pairs)) {
            if 2 * pairs < n {
                *o = half::f16::from_bits(b).to_f32();
            }
        }
    }
    #[cfg(not(all(target_arch = "arm", target_abi = "eabihf")))]
    for (o, &b) in out.iter_mut().zip(bits).take(n) {
        *o = half::f16::from_bits(b).to_f32();
    }
}

/// `bits[i] = values[i]` rounded to the nearest binary16 (ties to even), over the common
/// length.
///
/// ```
/// let mut bits = [0u16; 3];
/// inkling_core::engine::state_store::narrow(&[1.0, 1.0 / 3.0, 1e6], &mut bits);
/// assert_eq!(bits, [0x3c00, 0x3555, 0x7c00]); // 1e6 is beyond binary16: infinity
/// ```
pub fn narrow(values: &[f32], bits: &mut [u16]) {
    let n = bits.len().min(values.len());
    #[cfg(all(target_arch = "arm", target_abi = "eabihf"))]
    {
        let pairs = n / 2;
        arm::narrow_pairs(values, bits, pairs);
        if let (Some(&v), Some(o)) = (values.get(2 * pairs), bits.get_mut(2 * pairs)) {
            if 2 * pairs < n {
                *o = half::f16::from_f32(v).to_bits();
            }
        }
    }
    #[cfg(not(all(target_arch = "arm", target_abi = "eabihf")))]
    for (o, &v) in bits.iter_mut().zip(values).take(n) {
        *o = half::f16::from_f32(v).to_bits();
    }
}

/// The FPU's half-precision conversions (FPv4-SP: `VCVTB`/`VCVTT` take the bottom or top
/// half of a single register), two values a word, in loops of inline assembly (which saves
/// and restores the two FPU registers it uses). They round to nearest, ties to even, as the
/// FPSCR's reset value selects, with IEEE half precision (not the alternative format): the
/// same bits as the `half` crate gives on the workstation.
#[cfg(all(target_arch = "arm", target_abi = "eabihf"))]
#[allow(unsafe_code)] // inline assembly
mod arm {
    use core::arch::asm;

    /// `out[..2 · pairs] = bits[..2 · pairs]` widened, for `pairs` within both lengths.
    pub(super) fn widen_pairs(bits: &[u16], out: &mut [f32], pairs: usize) {
        if pairs == 0 || 2 * pairs > bits.len() || 2 * pairs > out.len() {
            return;
        }
        // SAFETY: reads 2·pairs u16 from `bits` and writes 2·pairs f32 to `out`, both within
        // their lengths (checked above); s14 and s15 are saved and restored.
        unsafe {
            asm!(
                "vpush {{s14-s15}}",
                "2:",
                "ldr {w}, [{src}], #4",
                "vmov s14, {w}",
                "vcvtt.f32.f16 s15, s14",
                "vcvtb.f32.f16 s14, s14",
                "vstmia {dst}!, {{s14-s15}}",
                "subs {n}, {n}, #1",
                "bne 2b",
                "vpop {{s14-s15}}",
                src = inout(reg) bits.as_ptr() => _,
                dst = inout(reg) out.as_mut_ptr() => _,
                n = inout(reg) pairs => _,
                w = out(reg) _,
            );
        }
    }

    /// `bits[..2 · pairs] = values[..2 · pairs]` rounded, for `pairs` within both lengths.
    pub(super) fn narrow_pairs(values: &[f32], bits: &mut [u16], pairs: usize) {
        if pairs == 0 || 2 * pairs > bits.len() || 2 * pairs > values.len() {
            return;
        }
        // SAFETY: reads 2·pairs f32 from `values` and writes 2·pairs u16 to `bits`, both
        // within their lengths (checked above); s14 and s15 are saved and restored.
        unsafe {
            asm!(
                "vpush {{s14-s15}}",
                "2:",
                "vldmia {src}!, {{s14-s15}}",
                "vcvtb.f16.f32 s14, s14",
                "vcvtt.f16.f32 s14, s15",
                "vmov {w}, s14",
                "str {w}, [{dst}], #4",
                "subs {n}, {n}, #1",
                "bne 2b",
                "vpop {{s14-s15}}",
                src = inout(reg) values.as_ptr() => _,
                dst = inout(reg) bits.as_mut_ptr() => _,
                n = inout(reg) pairs => _,
                w = out(reg) _,
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn widening_then_narrowing_gives_every_pattern_back() {
        // Every binary16 value is exactly an f32 (IEEE 754-2008, 3.6: binary16 has 11
        // significand bits and exponents -14..15, all within binary32), so the round trip
        // is the identity on all non-NaN patterns.
        let all: heapless::Vec<u16, 4096> = (0..4096u16).map(|i| i * 16 + 3).collect();
        let mut wide = [0.0f32; 4096];
        widen(&all, &mut wide);
        let mut back = [0u16; 4096];
        narrow(&wide, &mut back);
        for (&a, &b) in all.iter().zip(&back) {
            if half::f16::from_bits(a).is_nan() {
                continue;
            }
            assert_eq!(a, b, "{a:#06x}");
        }
    }

    #[test]
    fn narrowing_rounds_to_nearest_even() {
        // 1 + 2^-11 lies halfway between 1 and 1 + 2^-10: ties go to the even significand, 1.
        // 1 + 3·2^-11 lies halfway between 1 + 2^-10 and 1 + 2^-9: it goes to 1 + 2^-9.
        let mut bits = [0u16; 2];
        narrow(
            &[1.0 + 2f32.powi(-11), 1.0 + 3.0 * 2f32.powi(-11)],
            &mut bits,
        );
        assert_eq!(bits, [0x3c00, 0x3c02]);
    }
}
