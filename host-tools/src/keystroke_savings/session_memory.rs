//! The buffers of a typing session, owned on the host: the core's owner over vectors sized
//! for the model loaded.

use inkling_core::session::SessionBuffers;
use inkling_core::Dims;

/// The f32 state buffer and the scratch a session borrows, on the heap.
pub type SessionMemory = SessionBuffers<Vec<f32>, Vec<f32>, Vec<i16>>;

/// Buffers for a model of `dims` with `beams` suggestions (a session over them takes at most
/// `beams` beams).
pub fn session_memory(dims: &Dims, beams: usize) -> SessionMemory {
    SessionBuffers::from_parts(
        vec![0.0; dims.session_floats(beams)],
        vec![0.0; dims.work_len()],
        vec![0; dims.act_len()],
    )
}
