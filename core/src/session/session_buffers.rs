//! [`SessionBuffers`]: the one owner of a typing session's buffers, and
//! [`StaticSessionBuffers`], the same in a `static`, taken once.

use core::cell::{Cell, UnsafeCell};

use critical_section::Mutex;

use super::typing_session::Session;
use crate::engine::buffers::Scratch;
use crate::engine::weights::Weights;
use crate::error::Error;

/// Everything a [`Session`] borrows: its states (`floats`, at least
/// [`Dims::session_floats`](crate::Dims::session_floats)`(K)` f32), the engine's work space
/// (`work`, at least [`Dims::work_len`](crate::Dims::work_len) f32) and activation scratch
/// (`act`, at least [`Dims::act_len`](crate::Dims::act_len) i16). Longer buffers are fine
/// (the rest is unused); shorter ones make [`session`](SessionBuffers::session) return
/// [`Error::BufferTooSmall`] naming the buffer.
///
/// The storage is any mutable slice owner: fixed arrays on a device ([`SessionBuffers::new`],
/// usable in a `static`, see [`StaticSessionBuffers`]), vectors on a workstation
/// ([`SessionBuffers::from_parts`]).
///
/// ```
/// use inkling_core::{Model, session::{SearchOptions, Session, SessionBuffers}};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// let d = *model.dims();
/// // Sized at run time for whatever model was loaded.
/// let mut buffers = SessionBuffers::from_parts(
///     vec![0.0f32; d.session_floats(3)], vec![0.0f32; d.work_len()], vec![0i16; d.act_len()]);
/// let mut session: Session<_, 3> = buffers.session(model)?;
/// session.push_bytes(b"see you to")?;
/// assert!(session.suggest(&SearchOptions::new(3))?.list.len() <= 3);
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug, Clone)]
pub struct SessionBuffers<F, W, A> {
    /// The session's states and logits.
    pub floats: F,
    /// The engine's f32 work space.
    pub work: W,
    /// The engine's activation scratch.
    pub act: A,
}

impl<const F: usize, const W: usize, const A: usize> SessionBuffers<[f32; F], [f32; W], [i16; A]> {
    /// Zeroed fixed-size buffers (usable in a `static`). Pick the sizes from
    /// [`Dims::session_floats`](crate::Dims::session_floats), [`Dims::work_len`](crate::Dims::work_len)
    /// and [`Dims::act_len`](crate::Dims::act_len) of the model you will run.
    ///
    /// ```
    /// use inkling_core::{session::SessionBuffers, image::example::TINY_DIMS as D};
    /// let buffers = SessionBuffers::<[f32; D.session_floats(2)], [f32; D.work_len()],
    ///                                [i16; D.act_len()]>::new();
    /// assert_eq!(core::mem::size_of_val(&buffers), 4 * D.session_floats(2) + D.scratch_bytes());
    /// ```
    pub const fn new() -> Self {
        SessionBuffers {
            floats: [0.0; F],
            work: [0.0; W],
            act: [0; A],
        }
    }
}

impl<const F: usize, const W: usize, const A: usize> Default
    for SessionBuffers<[f32; F], [f32; W], [i16; A]>
{
    fn default() -> Self {
        Self::new()
    }
}

impl<F, W, A> SessionBuffers<F, W, A>
where
    F: AsMut<[f32]>,
    W: AsMut<[f32]>,
    A: AsMut<[i16]>,
{
    /// Buffers from storage the caller made (for example vectors sized by the model's
    /// [`Dims`](crate::Dims) on a workstation).
    ///
    /// ```
    /// use inkling_core::{session::SessionBuffers, image::example::TINY_DIMS as D};
    /// let buffers = SessionBuffers::from_parts(
    ///     vec![0.0f32; D.session_floats(3)], vec![0.0f32; D.work_len()], vec![0i16; D.act_len()]);
    /// assert_eq!(buffers.act.len(), D.act_len());
    /// ```
    pub const fn from_parts(floats: F, work: W, act: A) -> Self {
        SessionBuffers { floats, work, act }
    }

    /// A fresh, primed session over `weights` with `K` beams and a history of `H` bytes, in
    /// these buffers. Fails with [`Error::BufferTooSmall`] (naming `session`, `work` or
    /// `act`) if a buffer is too small for the model and `K`.
    ///
    /// ```
    /// use inkling_core::{Error, Model, session::{Session, SessionBuffers}};
    /// # let image = inkling_core::image::example::tiny_image();
    /// let model = Model::from_bytes(&image)?;
    /// let mut small = SessionBuffers::<[f32; 16], [f32; 512], [i16; 64]>::new();
    /// let err = small.session::<_, 3, 64>(model).unwrap_err();
    /// assert!(matches!(err, Error::BufferTooSmall { buffer: "session", .. }));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn session<X: Weights, const K: usize, const H: usize>(
        &mut self,
        weights: X,
    ) -> Result<Session<'_, X, K, H>, Error> {
        let scratch = Scratch::new(weights.dims(), self.work.as_mut(), self.act.as_mut())?;
        Session::new(weights, self.floats.as_mut(), scratch)
    }
}

/// [`SessionBuffers`] of fixed sizes in a `static`, handed out once: a device keeps its
/// session's RAM in `.bss` (counted by the linker) and sets the session up with one call,
/// with no `unsafe` and no `static mut`.
///
/// The first [`take`](StaticSessionBuffers::take) (or [`session`](StaticSessionBuffers::session))
/// gets the buffers for the rest of the program; every later call gets
/// [`Error::InUse`]. The check runs in a critical section (the `critical-section` crate), so
/// it holds with interrupts and on cores without atomic read-modify-write (Cortex-M0+,
/// RV32IMC): the firmware links an implementation of it (for example `cortex-m`'s
/// `critical-section-single-core` feature or `riscv`'s `critical-section-single-hart`).
///
/// ```
/// use inkling_core::{Error, Model, session::{Session, StaticSessionBuffers}};
/// use inkling_core::image::example::TINY_DIMS as D;
/// static BUFFERS: StaticSessionBuffers<{ D.session_floats(3) }, { D.work_len() }, { D.act_len() }> =
///     StaticSessionBuffers::new();
/// // On a device the image is a `static` in flash; here it is made at run time.
/// let image: &'static [u8] = Box::leak(Box::new(inkling_core::image::example::tiny_image()));
/// let mut session: Session<_, 3> = BUFFERS.session(Model::from_bytes(image)?)?;
/// session.push(b'h')?;
/// assert!(matches!(BUFFERS.take(), Err(Error::InUse { .. })));
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub struct StaticSessionBuffers<const F: usize, const W: usize, const A: usize> {
    buffers: UnsafeCell<SessionBuffers<[f32; F], [f32; W], [i16; A]>>,
    taken: Mutex<Cell<bool>>,
}

// SAFETY: the buffers are reached only through `take`, which hands out the one `&mut` at
// most once (its flag is read and set inside a critical section).
#[allow(unsafe_code)]
unsafe impl<const F: usize, const W: usize, const A: usize> Sync for StaticSessionBuffers<F, W, A> {}

impl<const F: usize, const W: usize, const A: usize> StaticSessionBuffers<F, W, A> {
    /// Zeroed buffers, not yet taken (a `const fn`, for a `static`).
    ///
    /// ```
    /// use inkling_core::session::StaticSessionBuffers;
    /// static BUFFERS: StaticSessionBuffers<8192, 512, 64> = StaticSessionBuffers::new();
    /// assert_eq!(BUFFERS.take()?.floats.len(), 8192);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub const fn new() -> Self {
        StaticSessionBuffers {
            buffers: UnsafeCell::new(SessionBuffers::new()),
            taken: Mutex::new(Cell::new(false)),
        }
    }

    /// The buffers, for the rest of the program; [`Error::InUse`] if they were taken before.
    ///
    /// ```
    /// use inkling_core::{Error, session::StaticSessionBuffers};
    /// static BUFFERS: StaticSessionBuffers<16, 16, 16> = StaticSessionBuffers::new();
    /// let buffers = BUFFERS.take()?;
    /// buffers.work[0] = 1.0;
    /// assert_eq!(BUFFERS.take().unwrap_err(), Error::InUse { buffer: "static session buffers" });
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    #[allow(unsafe_code)] // the one `&mut` to the cell's buffers
    #[allow(clippy::mut_from_ref)] // handed out once: see the flag
    #[allow(clippy::type_complexity)] // the one type `new` makes, spelt out
    pub fn take(
        &'static self,
    ) -> Result<&'static mut SessionBuffers<[f32; F], [f32; W], [i16; A]>, Error> {
        let first = critical_section::with(|cs| !self.taken.borrow(cs).replace(true));
        if first {
            // SAFETY: the flag was clear and is now set, so no other reference to the
            // buffers exists or will be made.
            Ok(unsafe { &mut *self.buffers.get() })
        } else {
            Err(Error::InUse {
                buffer: "static session buffers",
            })
        }
    }

    /// Takes the buffers and sets up a fresh session over `weights` in them, in one call
    /// (see [`SessionBuffers::session`] for its errors).
    ///
    /// ```
    /// use inkling_core::{Model, session::{Session, StaticSessionBuffers}};
    /// static BUFFERS: StaticSessionBuffers<8192, 512, 64> = StaticSessionBuffers::new();
    /// let image: &'static [u8] = Box::leak(Box::new(inkling_core::image::example::tiny_image()));
    /// let session: Session<_, 2> = BUFFERS.session(Model::from_bytes(image)?)?;
    /// assert!(session.word().is_empty());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn session<X: Weights, const K: usize, const H: usize>(
        &'static self,
        weights: X,
    ) -> Result<Session<'static, X, K, H>, Error> {
        self.take()?.session(weights)
    }
}

impl<const F: usize, const W: usize, const A: usize> core::fmt::Debug
    for StaticSessionBuffers<F, W, A>
{
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.debug_struct("StaticSessionBuffers")
            .field("floats", &F)
            .field("work", &W)
            .field("act", &A)
            .finish_non_exhaustive()
    }
}

impl<const F: usize, const W: usize, const A: usize> Default for StaticSessionBuffers<F, W, A> {
    fn default() -> Self {
        Self::new()
    }
}
