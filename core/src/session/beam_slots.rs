//! Caller-owned storage for a session's engine states, kept in 16-bit floats.

use crate::engine::buffers::Scratch;
use crate::engine::recurrence::{prefill_checked, prefill_stored};
use crate::engine::state_store::{narrow, widen, HalfState};
use crate::engine::weights::Weights;
use crate::error::Error;
use crate::image::dims::Dims;

/// `count` engine states carved from a caller's f32 buffer: each state is
/// [`Dims::state_len`] binary16 values (two to an f32 element of the buffer), and one
/// block's f32 work space ([`Dims::block_state_len`]) serves them all while a step runs.
#[derive(Debug)]
pub(crate) struct Slots<'b> {
    bits: &'b mut [u16],
    work: &'b mut [f32],
    dims: Dims,
}

impl<'b> Slots<'b> {
    /// f32 elements that `count` states of `dims` take, work space included.
    pub(crate) const fn floats(dims: &Dims, count: usize) -> usize {
        dims.block_state_len() + (count * dims.state_len()).div_ceil(2)
    }

    /// Takes `count` states off the front of `floats` and returns them with the rest.
    pub(crate) fn carve(
        floats: &'b mut [f32],
        dims: &Dims,
        count: usize,
    ) -> Result<(Self, &'b mut [f32]), Error> {
        let needed = Self::floats(dims, count);
        let actual = floats.len();
        let (mine, rest) = floats
            .split_at_mut_checked(needed)
            .ok_or(Error::BufferTooSmall {
                buffer: "session",
                needed,
                actual,
            })?;
        let (work, states) = mine.split_at_mut(dims.block_state_len());
        let bits: &mut [u16] = bytemuck::cast_slice_mut(states);
        Ok((
            Slots {
                bits,
                work,
                dims: *dims,
            },
            rest,
        ))
    }

    fn range(&self, slot: usize) -> core::ops::Range<usize> {
        let len = self.dims.state_len();
        slot * len..(slot + 1) * len
    }

    /// The bits of `slot` (empty if there is no such slot).
    fn bits(&self, slot: usize) -> &[u16] {
        self.bits.get(self.range(slot)).unwrap_or(&[])
    }

    /// Copies the state of slot `from` into slot `to`.
    pub(crate) fn copy_state(&mut self, from: usize, to: usize) {
        let (src, dst) = (self.range(from), self.range(to).start);
        if src.end <= self.bits.len() && dst + self.dims.state_len() <= self.bits.len() {
            self.bits.copy_within(src, dst);
        }
    }

    /// Zeroes the state of `slot`.
    pub(crate) fn reset(&mut self, slot: usize) {
        let range = self.range(slot);
        if let Some(bits) = self.bits.get_mut(range) {
            bits.fill(0);
        }
    }

    /// The state of `slot` widened to f32 into `out`.
    pub(crate) fn read(&self, slot: usize, out: &mut [f32]) {
        widen(self.bits(slot), out);
    }

    /// Overwrites the state of `slot` with `values`, rounded to 16 bits.
    pub(crate) fn write(&mut self, slot: usize, values: &[f32]) {
        let range = self.range(slot);
        if let Some(bits) = self.bits.get_mut(range) {
            narrow(values, bits);
        }
    }

    /// Runs known `bytes` through the model on the state of `slot`, one byte a pass (the
    /// state rounded to 16 bits after each), and returns the logits after the last (the
    /// scratch's last logits for none).
    pub(crate) fn feed<'s, W: Weights + ?Sized>(
        &mut self,
        slot: usize,
        weights: &W,
        scratch: &'s mut Scratch<'_>,
        bytes: &[u8],
    ) -> Result<&'s [f32], Error> {
        let range = self.range(slot);
        let bits = self.bits.get_mut(range).unwrap_or(&mut []);
        let mut state = HalfState::new(&self.dims, bits, self.work)?;
        prefill_stored(weights, &mut state, scratch, bytes)
    }

    /// Runs `bytes` through the model on the state of `slot` in passes of the scratch's
    /// chunk capacity (rounded to 16 bits after each pass), handing the logits after each
    /// byte to `check` until it returns `false`; returns the bytes fed (see
    /// [`prefill_checked`]).
    pub(crate) fn check<W: Weights + ?Sized>(
        &mut self,
        slot: usize,
        weights: &W,
        scratch: &mut Scratch<'_>,
        bytes: &[u8],
        check: impl FnMut(usize, &[f32]) -> bool,
    ) -> Result<usize, Error> {
        let range = self.range(slot);
        let bits = self.bits.get_mut(range).unwrap_or(&mut []);
        let mut state = HalfState::new(&self.dims, bits, self.work)?.in_passes();
        prefill_checked(weights, &mut state, scratch, bytes, check)
    }
}
