//! Caller-owned storage for engine states, each with the logits that follow it.

use crate::engine::buffers::Scratch;
use crate::engine::recurrence::prefill;
use crate::engine::weights::Weights;
use crate::error::Error;
use crate::image::format::VOCAB;

/// `count` slots carved from a caller's f32 buffer, each an engine state
/// ([`Dims::state_len`](crate::Dims::state_len) floats) followed by the 256 logits of the
/// byte after it.
#[derive(Debug)]
pub(crate) struct Slots<'b> {
    floats: &'b mut [f32],
    state_len: usize,
}

impl<'b> Slots<'b> {
    /// Floats of one slot.
    pub(crate) const fn stride(state_len: usize) -> usize {
        state_len + VOCAB
    }

    /// Takes `count` slots off the front of `floats` and returns them with the rest.
    pub(crate) fn carve(
        floats: &'b mut [f32],
        state_len: usize,
        count: usize,
    ) -> Result<(Self, &'b mut [f32]), Error> {
        let needed = count * Self::stride(state_len);
        let actual = floats.len();
        let (mine, rest) = floats
            .split_at_mut_checked(needed)
            .ok_or(Error::BufferTooSmall {
                buffer: "session",
                needed,
                actual,
            })?;
        Ok((
            Slots {
                floats: mine,
                state_len,
            },
            rest,
        ))
    }

    fn range(&self, slot: usize) -> core::ops::Range<usize> {
        let start = slot * Self::stride(self.state_len);
        start..start + Self::stride(self.state_len)
    }

    /// The state and logits of `slot` (empty if there is no such slot).
    pub(crate) fn parts(&self, slot: usize) -> (&[f32], &[f32]) {
        let whole = self.floats.get(self.range(slot)).unwrap_or(&[]);
        whole.split_at_checked(self.state_len).unwrap_or((&[], &[]))
    }

    /// The state and logits of `slot`, writable.
    pub(crate) fn parts_mut(&mut self, slot: usize) -> (&mut [f32], &mut [f32]) {
        let range = self.range(slot);
        let whole = self.floats.get_mut(range).unwrap_or(&mut []);
        whole
            .split_at_mut_checked(self.state_len)
            .unwrap_or((&mut [], &mut []))
    }

    /// The logits of `slot`.
    pub(crate) fn logits(&self, slot: usize) -> &[f32] {
        self.parts(slot).1
    }

    /// Overwrites `slot` with a state and its logits.
    pub(crate) fn load(&mut self, slot: usize, state: &[f32], logits: &[f32]) {
        let (s, l) = self.parts_mut(slot);
        copy(state, s);
        copy(logits, l);
    }

    /// Copies the state (not the logits) of slot `from` into slot `to`.
    pub(crate) fn copy_state(&mut self, from: usize, to: usize) {
        let src = self.range(from);
        let dst = self.range(to).start;
        if src.end <= self.floats.len() && dst + self.state_len <= self.floats.len() {
            self.floats
                .copy_within(src.start..src.start + self.state_len, dst);
        }
    }

    /// Zeroes the state of `slot`.
    pub(crate) fn reset(&mut self, slot: usize) {
        let (s, l) = self.parts_mut(slot);
        s.fill(0.0);
        l.fill(0.0);
    }

    /// Runs `byte` through the model on the state of `slot` and keeps the logits after it.
    pub(crate) fn step<W: Weights + ?Sized>(
        &mut self,
        slot: usize,
        weights: &W,
        scratch: &mut Scratch<'_>,
        byte: u8,
    ) -> Result<(), Error> {
        self.feed(slot, weights, scratch, &[byte])
    }

    /// Runs known `bytes` through the model on the state of `slot` (in prefill passes as
    /// large as the scratch allows) and keeps the logits after the last; nothing for none.
    pub(crate) fn feed<W: Weights + ?Sized>(
        &mut self,
        slot: usize,
        weights: &W,
        scratch: &mut Scratch<'_>,
        bytes: &[u8],
    ) -> Result<(), Error> {
        if bytes.is_empty() {
            return Ok(());
        }
        let (state, logits) = self.parts_mut(slot);
        let next = prefill(weights, state, scratch, bytes)?;
        copy(next, logits);
        Ok(())
    }
}

/// `dst = src` over their common length (they are always the same length here).
fn copy(src: &[f32], dst: &mut [f32]) {
    for (d, &s) in dst.iter_mut().zip(src) {
        *d = s;
    }
}
