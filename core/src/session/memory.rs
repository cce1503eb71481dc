//! The RAM one session needs, known before anything is flashed.

use super::beam_search::{Beam, Candidate, LearnedCandidate};
use super::beam_slots::Slots;
use super::draft::{Draft, Phrase};
use super::suggestion::Suggestion;
use super::word_buffer::WordBuffer;
use crate::image::dims::Dims;
use crate::image::format::VOCAB;

impl Dims {
    /// f32 elements of the buffer a [`Session`](crate::session::Session) with `k` beams
    /// takes: the 256 next-byte logits after the live state and after the snapshot at the
    /// last word boundary, one block's state in f32 (the work space of a step), and `k + 2`
    /// engine states (the live state, the snapshot and `k` beams) in 16-bit floats, two to
    /// an element.
    ///
    /// ```
    /// use inkling_core::image::example::TINY_DIMS as D;
    /// let s = D.state_len();
    /// assert_eq!(D.session_floats(3), 2 * 256 + D.block_state_len() + (3 + 2) * s / 2);
    /// ```
    pub const fn session_floats(&self, k: usize) -> usize {
        2 * VOCAB + Slots::floats(self, k + 2)
    }

    /// Bytes of RAM one session with `k` beams and a history of `history` bytes needs:
    /// - the states buffer, `4 ·` [`session_floats`](Dims::session_floats)`(k)`;
    /// - the engine scratch, [`scratch_bytes`](Dims::scratch_bytes);
    /// - the fixed text buffers in the session: the history and the current word;
    /// - the search kept in the session between calls (the beams of a round, its parents and
    ///   the beams the budget stopped, the candidates, the results and the learned words
    ///   offered from a user memory, `k` of each, and a phrase draft) and what
    ///   a round builds on the stack (the next beams);
    /// - [`SESSION_HANDLE_BYTES`] for the model handle and the slices and lengths in the
    ///   session value.
    ///
    /// ```
    /// use inkling_core::{Dims, image::example::TINY_DIMS};
    /// let ram = TINY_DIMS.session_bytes(3, 128);
    /// assert!(ram > 4 * TINY_DIMS.session_floats(3) + TINY_DIMS.scratch_bytes());
    /// // A model with 3 blocks, I = 128, N = 8, K = 4: the states dominate.
    /// let dims = Dims { d_model: 96, d_inner: 128, d_state: 8, d_conv: 4, dt_rank: 6,
    ///                   blocks: 3, tied_head: true, norm_eps: 1e-5, group: 0 };
    /// assert!(dims.session_bytes(3, 128) < 60 * 1024);
    /// ```
    pub const fn session_bytes(&self, k: usize, history: usize) -> usize {
        4 * self.session_floats(k)
            + self.scratch_bytes()
            + history
            + core::mem::size_of::<WordBuffer>()
            + search_bytes(k)
            + k * core::mem::size_of::<Beam>()
            + 2 * k * core::mem::size_of::<bool>()
            + SESSION_HANDLE_BYTES
    }
}

/// Bytes [`Dims::session_bytes`] counts for what a session value holds besides its text
/// buffers and search: the model handle, the slices into the caller's buffers and their
/// lengths (64 machine words, a bound checked by a test).
///
/// ```
/// assert!(inkling_core::session::memory::SESSION_HANDLE_BYTES >= 256);
/// ```
pub const SESSION_HANDLE_BYTES: usize = 64 * core::mem::size_of::<usize>();

/// Bytes of a search kept for `k` beams: its lists and their lengths and flags, and the
/// phrase draft, the phrase verified and the one in its results.
const fn search_bytes(k: usize) -> usize {
    use core::mem::size_of;
    k * (3 * size_of::<Beam>()
        + size_of::<Candidate>()
        + size_of::<Suggestion>()
        + size_of::<LearnedCandidate>())
        + size_of::<[usize; 12]>()
        + size_of::<Option<Draft>>()
        + 2 * size_of::<Option<Phrase>>()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::session::{Session, TextHistory};
    use crate::Model;

    #[test]
    fn session_value_is_no_larger_than_its_text_buffers_plus_handles() {
        // The session value: the text buffers counted in session_bytes, plus the model
        // handle and the slices into caller buffers (common practice, no source: a bound of
        // 64 machine words for handles and lengths).
        let text = core::mem::size_of::<TextHistory<128>>()
            + core::mem::size_of::<WordBuffer>()
            + search_bytes(3);
        let value = core::mem::size_of::<Session<'_, Model<'_>, 3, 128>>();
        let handles = SESSION_HANDLE_BYTES;
        assert!(value <= text + handles, "{value} > {text} + {handles}");
    }
}
