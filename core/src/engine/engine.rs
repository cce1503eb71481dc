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
    ///
    /// ```
    /// use inkling_core::{Engine, EngineBuffers, Error, Model};
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = Model::from_bytes(&image)?;
    /// let mut small = EngineBuffers::<16, 1024, 64>::new(); // the state needs 112 f32
    /// let err = Engine::new(model, &mut small).unwrap_err();
    /// assert_eq!(err, Error::BufferTooSmall { buffer: "state", needed: 112, actual: 16 });
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
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
    ///
    /// ```
    /// use inkling_core::{Engine, Model, Scratch};
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = Model::from_bytes(&image)?;
    /// let (mut state, mut work, mut act) = ([0.0f32; 200], [0.0f32; 346], [0i16; 16]);
    /// let scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let engine = Engine::from_parts(model, &mut state, scratch)?;
    /// assert_eq!(engine.state().len(), 112); // only state_len of the 200 are used
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
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
    ///
    /// ```
    /// # use inkling_core::{Model, Engine, EngineBuffers};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let mut buffers = EngineBuffers::<1024, 1024, 64>::new();
    /// let mut engine = Engine::new(Model::from_bytes(&image)?, &mut buffers)?;
    /// assert_eq!(engine.model().dims(), &inkling_core::image::example::TINY_DIMS);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn model(&self) -> &Model<'m> {
        &self.model
    }

    /// Feeds one byte and returns the logits of the next.
    ///
    /// ```
    /// # use inkling_core::{Model, Engine, EngineBuffers};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let mut buffers = EngineBuffers::<1024, 1024, 64>::new();
    /// let mut engine = Engine::new(Model::from_bytes(&image)?, &mut buffers)?;
    /// let logits = engine.step(b'h').to_vec();
    /// assert_eq!(logits.len(), 256);
    /// assert_eq!(engine.logits(), &logits[..]);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn step(&mut self, byte: u8) -> &[f32] {
        // The buffers were checked against the model when the engine was made.
        match step(&self.model, self.state, &mut self.scratch, byte) {
            Ok(logits) => logits,
            Err(_) => &[],
        }
    }

    /// The logits after the last byte fed (zeros before the first).
    ///
    /// ```
    /// # use inkling_core::{Model, Engine, EngineBuffers};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let mut buffers = EngineBuffers::<1024, 1024, 64>::new();
    /// let mut engine = Engine::new(Model::from_bytes(&image)?, &mut buffers)?;
    /// assert!(engine.logits().iter().all(|&l| l == 0.0));
    /// engine.step(b'a');
    /// assert!(engine.logits().iter().any(|&l| l != 0.0));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn logits(&self) -> &[f32] {
        self.scratch.logits()
    }

    /// The byte with the highest logit after the last byte fed (the lowest such byte on ties).
    ///
    /// ```
    /// # use inkling_core::{Model, Engine, EngineBuffers};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let mut buffers = EngineBuffers::<1024, 1024, 64>::new();
    /// let mut engine = Engine::new(Model::from_bytes(&image)?, &mut buffers)?;
    /// assert_eq!(engine.most_likely_byte(), 0); // all logits tie at zero before the first byte
    /// engine.step(b'a');
    /// let best = engine.logits()[engine.most_likely_byte() as usize];
    /// assert!(engine.logits().iter().all(|&l| l <= best));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
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
    ///
    /// ```
    /// # use inkling_core::{Model, Engine, EngineBuffers};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let mut buffers = EngineBuffers::<1024, 1024, 64>::new();
    /// let mut engine = Engine::new(Model::from_bytes(&image)?, &mut buffers)?;
    /// let first = engine.step(b'x').to_vec();
    /// engine.step(b'y');
    /// engine.reset();
    /// assert!(engine.state().iter().all(|&s| s == 0.0));
    /// assert_eq!(engine.step(b'x'), &first[..]); // as if freshly made
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn reset(&mut self) {
        self.state.fill(0.0);
        self.scratch.work.fill(0.0);
    }

    /// The current state, to save it (copy it somewhere).
    ///
    /// ```
    /// # use inkling_core::{Model, Engine, EngineBuffers};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let mut buffers = EngineBuffers::<1024, 1024, 64>::new();
    /// let mut engine = Engine::new(Model::from_bytes(&image)?, &mut buffers)?;
    /// engine.step(b'a');
    /// let dims = *engine.model().dims();
    /// assert_eq!(core::mem::size_of_val(engine.state()), dims.state_bytes());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn state(&self) -> &[f32] {
        self.state
    }

    /// Restores a state saved from [`Engine::state`]; the logits keep their last value.
    ///
    /// ```
    /// # use inkling_core::{Model, Engine, EngineBuffers};
    /// # let image = inkling_core::image::example::tiny_image();
    /// # let mut buffers = EngineBuffers::<1024, 1024, 64>::new();
    /// let mut engine = Engine::new(Model::from_bytes(&image)?, &mut buffers)?;
    /// let fresh = engine.state().to_vec();
    /// engine.step(b'a');
    /// engine.restore(&fresh)?; // back to the start, as far as the state goes
    /// assert!(engine.restore(&fresh[1..]).is_err()); // the length must match
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
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
