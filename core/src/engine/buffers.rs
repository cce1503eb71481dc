//! Caller-owned buffers for the engine.

use crate::error::Error;
use crate::image::dims::Dims;

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
    /// Where the logits start in `work`.
    logits_at: usize,
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
    pub fn new(dims: &Dims, work: &'b mut [f32], act: &'b mut [i16]) -> Result<Self, Error> {
        check_len("work", dims.work_len(), work.len())?;
        check_len("act", dims.act_len(), act.len())?;
        Ok(Scratch {
            work,
            act,
            logits_at: dims.work_len() - crate::image::format::VOCAB,
        })
    }

    /// The logits of the last step (256 values).
    pub fn logits(&self) -> &[f32] {
        let end = self.logits_at + crate::image::format::VOCAB;
        self.work.get(self.logits_at..end).unwrap_or(&[])
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
