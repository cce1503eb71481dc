//! The buffers of a typing session, owned on the host.

use inkling_core::engine::weights::Weights;
use inkling_core::session::Session;
use inkling_core::{Dims, Error, Scratch};

/// The f32 state buffer and the scratch a [`Session`] borrows, sized for one model and `K`
/// beams.
#[derive(Debug)]
pub struct SessionMemory {
    floats: Vec<f32>,
    work: Vec<f32>,
    act: Vec<i16>,
}

impl SessionMemory {
    /// Buffers for a model of `dims` with `beams` suggestions.
    pub fn new(dims: &Dims, beams: usize) -> Self {
        SessionMemory {
            floats: vec![0.0; dims.session_floats(beams)],
            work: vec![0.0; dims.work_len()],
            act: vec![0; dims.act_len()],
        }
    }

    /// A fresh session over `weights` in these buffers (made for the same dimensions and at
    /// least `K` beams).
    pub fn session<W: Weights, const K: usize>(
        &mut self,
        weights: W,
    ) -> Result<Session<'_, W, K>, Error> {
        let scratch = Scratch::new(weights.dims(), &mut self.work, &mut self.act)?;
        Session::new(weights, &mut self.floats, scratch)
    }
}
