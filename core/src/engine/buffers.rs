//! Caller-owned buffers for the engine.

use crate::error::Error;
use crate::image::dims::Dims;
use crate::image::format::VOCAB;

/// The most bytes one prefill pass takes, however large the scratch (it bounds the stack
/// array of per-byte activation scales).
///
/// ```
/// use inkling_core::{engine::buffers::MAX_CHUNK, Scratch, image::example::TINY_DIMS as D};
/// let mut work = vec![0.0f32; D.chunk_work_len(2 * MAX_CHUNK)];
/// let mut act = vec![0i16; D.chunk_act_len(2 * MAX_CHUNK)];
/// // Room for 64 bytes a pass, but a pass takes at most MAX_CHUNK.
/// assert_eq!(Scratch::new(&D, &mut work, &mut act)?.chunk_capacity(), MAX_CHUNK);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub const MAX_CHUNK: usize = 32;

/// The scratch of one step: f32 work space and the quantised-activation buffer. One scratch
/// serves any number of states (beams) of the same model, one step at a time.
///
/// ```
/// use inkling_core::{Scratch, image::example::TINY_DIMS};
/// let mut work = [0.0f32; 512];
/// let mut act = [0i16; 64];
/// let scratch = Scratch::new(&TINY_DIMS, &mut work, &mut act)?;
/// # let _ = scratch;
/// let mut small = [0.0f32; 4];
/// assert!(Scratch::new(&TINY_DIMS, &mut small, &mut act).is_err());
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug)]
pub struct Scratch<'b> {
    pub(crate) work: &'b mut [f32],
    pub(crate) act: &'b mut [i16],
    /// Bytes one prefill pass takes (see [`Scratch::chunk_capacity`]).
    chunk: usize,
}

/// Checks that a buffer has at least `needed` elements.
pub(crate) fn check_len(buffer: &'static str, needed: usize, actual: usize) -> Result<(), Error> {
    if actual < needed {
        Err(Error::BufferTooSmall {
            buffer,
            needed,
            actual,
        })
    } else {
        Ok(())
    }
}

impl<'b> Scratch<'b> {
    /// Wraps caller buffers of at least [`Dims::work_len`] f32 and [`Dims::act_len`] i16
    /// elements; longer buffers are fine (the rest is unused).
    ///
    /// ```
    /// use inkling_core::{Scratch, image::example::TINY_DIMS as D};
    /// let mut work = vec![0.0f32; D.work_len()];
    /// let mut act = vec![0i16; D.act_len()];
    /// assert!(Scratch::new(&D, &mut work, &mut act[1..]).is_err()); // one i16 short
    /// assert_eq!(Scratch::new(&D, &mut work, &mut act)?.chunk_capacity(), 1);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn new(dims: &Dims, work: &'b mut [f32], act: &'b mut [i16]) -> Result<Self, Error> {
        check_len("work", dims.work_len(), work.len())?;
        check_len("act", dims.act_len(), act.len())?;
        let by_work = (work.len() - VOCAB) / (dims.work_len() - VOCAB).max(1);
        let by_act = act.len() / dims.act_len().max(1);
        let chunk = by_work.min(by_act).clamp(1, MAX_CHUNK);
        Ok(Scratch { work, act, chunk })
    }

    /// The logits of the last step (256 values).
    ///
    /// ```
    /// use inkling_core::{Model, Scratch, engine::recurrence::step};
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = Model::from_bytes(&image)?;
    /// let (mut state, mut work, mut act) = ([0.0f32; 112], [0.0f32; 346], [0i16; 16]);
    /// let mut scratch = Scratch::new(model.dims(), &mut work, &mut act)?;
    /// let returned = step(&model, &mut state, &mut scratch, b'a')?.to_vec();
    /// assert_eq!(scratch.logits(), &returned[..]);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn logits(&self) -> &[f32] {
        self.work.get(..VOCAB).unwrap_or(&[])
    }

    /// How many bytes one pass of [`prefill`](super::recurrence::prefill) takes: as many as
    /// the buffers hold, from 1 (buffers of [`Dims::work_len`] and [`Dims::act_len`]) up to
    /// [`MAX_CHUNK`] (buffers of [`Dims::chunk_work_len`] and [`Dims::chunk_act_len`] for it).
    ///
    /// ```
    /// use inkling_core::{Scratch, image::example::TINY_DIMS as D};
    /// let mut work = vec![0.0f32; D.chunk_work_len(16)];
    /// let mut act = vec![0i16; D.chunk_act_len(16)];
    /// assert_eq!(Scratch::new(&D, &mut work, &mut act)?.chunk_capacity(), 16);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn chunk_capacity(&self) -> usize {
        self.chunk
    }
}

/// Fixed-capacity storage for one engine: a state of `STATE` f32, work space of `WORK` f32
/// and `ACT` i16 of activation scratch. Pick the sizes from [`Dims::state_len`],
/// [`Dims::work_len`] and [`Dims::act_len`] of the models you will run (larger is fine).
///
/// ```
/// use inkling_core::EngineBuffers;
/// static mut BUFFERS: EngineBuffers<4096, 1024, 256> = EngineBuffers::new();
/// let on_stack = EngineBuffers::<64, 600, 16>::new();
/// assert_eq!(core::mem::size_of_val(&on_stack), 4 * 64 + 4 * 600 + 2 * 16);
/// ```
#[derive(Debug, Clone)]
pub struct EngineBuffers<const STATE: usize, const WORK: usize, const ACT: usize> {
    /// The recurrent state.
    pub state: [f32; STATE],
    /// The f32 work space.
    pub work: [f32; WORK],
    /// The activation scratch.
    pub act: [i16; ACT],
}

impl<const STATE: usize, const WORK: usize, const ACT: usize> EngineBuffers<STATE, WORK, ACT> {
    /// Zeroed buffers (usable in a `static`).
    ///
    /// ```
    /// use inkling_core::{EngineBuffers, image::example::TINY_DIMS as D};
    /// // Sized exactly for the tiny model, at compile time.
    /// static BUFFERS: EngineBuffers<{ D.state_len() }, { D.work_len() }, { D.act_len() }> =
    ///     EngineBuffers::new();
    /// assert!(BUFFERS.state.iter().all(|&s| s == 0.0));
    /// ```
    pub const fn new() -> Self {
        EngineBuffers {
            state: [0.0; STATE],
            work: [0.0; WORK],
            act: [0; ACT],
        }
    }
}

impl<const STATE: usize, const WORK: usize, const ACT: usize> Default
    for EngineBuffers<STATE, WORK, ACT>
{
    fn default() -> Self {
        Self::new()
    }
}
