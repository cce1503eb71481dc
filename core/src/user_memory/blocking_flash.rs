//! A blocking `NorFlash` seen through the asynchronous flash traits, and the executor that
//! drives the store's futures to completion.
//!
//! `sequential-storage` (version 8) offers only `async` functions over
//! `embedded-storage-async`'s traits, and no blocking API. The firmware's flash drivers and
//! the simulated flashes here are blocking (`embedded-storage`'s `NorFlash`), so every
//! future the store makes completes without ever waiting: [`Blocking`] wraps the flash, and
//! [`run_to_end`] polls a future with a waker that does nothing. No runtime, no heap, no
//! interrupt is involved.

use core::future::Future;
use core::pin::pin;
use core::task::{Context, Poll, Waker};

use embedded_storage::nor_flash::{NorFlash, ReadNorFlash};

use crate::error::{Error, FlashProblem};

/// How many times [`run_to_end`] polls a future before it gives up. The futures here never
/// wait (see the module docs), so the first poll finishes them; the bound only makes sure a
/// future that did wait cannot hang the device.
pub(crate) const MAX_POLLS: usize = 16;

/// A blocking flash behind the asynchronous traits.
#[derive(Debug)]
pub(crate) struct Blocking<S>(pub(crate) S);

impl<S: embedded_storage::nor_flash::ErrorType> embedded_storage_async::nor_flash::ErrorType
    for Blocking<S>
{
    type Error = S::Error;
}

impl<S: ReadNorFlash> embedded_storage_async::nor_flash::ReadNorFlash for Blocking<S> {
    const READ_SIZE: usize = S::READ_SIZE;

    async fn read(&mut self, offset: u32, bytes: &mut [u8]) -> Result<(), Self::Error> {
        self.0.read(offset, bytes)
    }

    fn capacity(&self) -> usize {
        self.0.capacity()
    }
}

impl<S: NorFlash> embedded_storage_async::nor_flash::NorFlash for Blocking<S> {
    const WRITE_SIZE: usize = S::WRITE_SIZE;
    const ERASE_SIZE: usize = S::ERASE_SIZE;

    async fn erase(&mut self, from: u32, to: u32) -> Result<(), Self::Error> {
        self.0.erase(from, to)
    }

    async fn write(&mut self, offset: u32, bytes: &[u8]) -> Result<(), Self::Error> {
        self.0.write(offset, bytes)
    }
}

/// Polls `future` until it is done, at most [`MAX_POLLS`] times; a future still waiting
/// then gives [`FlashProblem::Unfinished`].
pub(crate) fn run_to_end<F: Future>(future: F) -> Result<F::Output, Error> {
    let mut future = pin!(future);
    let mut context = Context::from_waker(Waker::noop());
    for _ in 0..MAX_POLLS {
        if let Poll::Ready(out) = future.as_mut().poll(&mut context) {
            return Ok(out);
        }
    }
    Err(Error::MemoryFlash {
        problem: FlashProblem::Unfinished,
    })
}
