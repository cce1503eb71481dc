//! [`Engine`]: a model with one state and its scratch, for feeding text byte by byte.

use super::buffers::{check_len, EngineBuffers, Scratch};
use super::recurrence::step;
use crate::error::Error;
use crate::Model;

/// A model, one state and its scratch: the simplest way to run the model over text.
///
/// The state has a fixed size ([`Dims::state_len`](crate::Dims::state_len)) and never grows,
/// however much text is fed. It can be saved and restored with [`Engine::state`] and
/// [`Engine::restore`].
///
/// ```
/// use inkling_core::{Model, Engine, EngineBuffers};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// let mut buffers = EngineBuffers::<1024, 1024, 64>::new();
/// let mut engine = Engine::new(model, &mut buffers)?;
/// engine.step(b'a');
/// let mut saved = [0.0f32; 1024];
/// saved[..engine.state().len()].copy_from_slice(engine.state());
/// let after_b = engine.step(b'b')[7];
/// engine.restore(&saved[..engine.state().len()])?;
/// assert_eq!(engine.step(b'b')[7], after_b);
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug)]
pub struct Engine<'m, 'b> {
    model: Model<'m>,
    state: &'b mut [f32],
    scratch: Scratch<'b>,
}

impl<'m, 'b> Engine<'m, 'b> {
    /// An engine over `model` using fixed-capacity `buffers` (which must be large enough for
    /// the model: see [`Dims`](crate::Dims)). The state starts at zero.
    pub fn new<const S: usize, const W: usize, const A: usize>(
        model: Model<'m>,
        buffers: &'b mut EngineBuffers<S, W, A>,
    ) -> Result<Self, Error> {
        let dims = *model.dims();
        let scratch = Scratch::new(&dims, &mut buffers.work, &mut buffers.act)?;
        Self::from_parts(model, &mut buffers.state, scratch)
    }

    /// An engine over `model` with a caller-provided state (at least
    /// [`Dims::state_len`](crate::Dims::state_len) f32; only that many are used) and scratch.
    pub fn from_parts(
        model: Model<'m>,
        state: &'b mut [f32],
        scratch: Scratch<'b>,
    ) -> Result<Self, Error> {
        let len = model.dims().state_len();
        check_len("state", len, state.len())?;
        let state = state.get_mut(..len).unwrap_or(&mut []);
        state.fill(0.0);
        Ok(Engine {
            model,
            state,
            scratch,
        })
    }

    /// The model.
    pub fn model(&self) -> &Model<'m> {
        &self.model
    }

    /// Feeds one byte and returns the logits of the next.
    pub fn step(&mut self, byte: u8) -> &[f32] {
        // The buffers were checked against the model when the engine was made.
        match step(&self.model, self.state, &mut self.scratch, byte) {
            Ok(logits) => logits,
            Err(_) => &[],
        }
    }

    /// The logits after the last byte fed (zeros before the first).
    pub fn logits(&self) -> &[f32] {
        self.scratch.logits()
    }

    /// The byte with the highest logit after the last byte fed (the lowest such byte on ties).
    pub fn most_likely_byte(&self) -> u8 {
        let mut best = (0u8, f32::NEG_INFINITY);
        for (b, &l) in self.logits().iter().enumerate() {
            if l > best.1 {
                best = (b as u8, l);
            }
        }
        best.0
    }

    /// Back to the start: zero state, zero logits.
    pub fn reset(&mut self) {
        self.state.fill(0.0);
        self.scratch.work.fill(0.0);
    }

    /// The current state, to save it (copy it somewhere).
    pub fn state(&self) -> &[f32] {
        self.state
    }

    /// Restores a state saved from [`Engine::state`]; the logits keep their last value.
    pub fn restore(&mut self, saved: &[f32]) -> Result<(), Error> {
        if saved.len() != self.state.len() {
            return Err(Error::BufferTooSmall {
                buffer: "saved state",
                needed: self.state.len(),
                actual: saved.len(),
            });
        }
        self.state.copy_from_slice(saved);
        Ok(())
    }
}
