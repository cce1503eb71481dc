//! The buffers of a typing session, owned on the host: the core's owner over vectors sized
//! for the model loaded.

use inkling_core::engine::buffers::MAX_CHUNK;
use inkling_core::session::SessionBuffers;
use inkling_core::Dims;

/// The f32 state buffer and the scratch a session borrows, on the heap.
pub type SessionMemory = SessionBuffers<Vec<f32>, Vec<f32>, Vec<i16>>;

/// Buffers for a model of `dims` with `beams` suggestions (a session over them takes at most
/// `beams` beams), with a scratch for passes of [`MAX_CHUNK`] bytes, so that a phrase
/// draft is verified in one pass (typing and the word search take one byte a pass
/// whatever the scratch).
pub fn session_memory(dims: &Dims, beams: usize) -> SessionMemory {
    SessionBuffers::from_parts(
        vec![0.0; dims.session_floats(beams)],
        vec![0.0; dims.chunk_work_len(MAX_CHUNK)],
        vec![0; dims.chunk_act_len(MAX_CHUNK)],
    )
}
