//! Heap buffers of one typing session, sized for a model, and the session over them.

use inkling_core::session::Session;
use inkling_core::{Dims, Model, Scratch};

/// The states, engine work space and activation scratch of a session with `K` beams.
pub struct SessionBuffers<const K: usize> {
    floats: Vec<f32>,
    work: Vec<f32>,
    act: Vec<i16>,
}

impl<const K: usize> SessionBuffers<K> {
    /// Buffers of exactly the sizes `dims` asks for.
    pub fn new(dims: &Dims) -> Self {
        SessionBuffers {
            floats: vec![0.0; dims.session_floats(K)],
            work: vec![0.0; dims.work_len()],
            act: vec![0; dims.act_len()],
        }
    }

    /// A fresh session over `model` in these buffers (panics if they were sized for other
    /// dimensions).
    pub fn session<'b, const H: usize>(
        &'b mut self,
        model: Model<'b>,
    ) -> Session<'b, Model<'b>, K, H> {
        let dims = *model.dims();
        let scratch =
            Scratch::new(&dims, &mut self.work, &mut self.act).expect("buffers sized by the model");
        Session::new(model, &mut self.floats, scratch).expect("buffers sized by the model")
    }
}
