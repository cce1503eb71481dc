//! [`RamFlash`]: NOR flash kept in a byte buffer, for the host and for boards under
//! emulation.

use embedded_storage::nor_flash::{
    ErrorType, NorFlash, NorFlashError, NorFlashErrorKind, ReadNorFlash,
};

/// A `NorFlash` over a caller's bytes, with pages of `PAGE` bytes and 4-byte writes. It
/// behaves as NOR flash does: erasing sets a page's bytes to `0xFF`, and writing can only
/// clear bits (each byte becomes `old & new`). The host tools keep the user memory in one
/// and write its bytes to a file, so the file holds exactly what a device's flash would.
///
/// ```
/// use embedded_storage::nor_flash::{NorFlash, ReadNorFlash};
/// use inkling_core::user_memory::RamFlash;
/// let mut bytes = [0u8; 512];
/// let mut flash = RamFlash::<256>::new(&mut bytes);
/// flash.erase(0, 256)?;
/// flash.write(0, &[0x0F, 0xF0, 0x00, 0xFF])?;
/// flash.write(0, &[0xF3, 0xFF, 0xFF, 0xFF])?; // only clears bits: 0x0F & 0xF3 = 0x03
/// let mut out = [0u8; 4];
/// flash.read(0, &mut out)?;
/// assert_eq!(out, [0x03, 0xF0, 0x00, 0xFF]);
/// # Ok::<(), inkling_core::user_memory::RamFlashError>(())
/// ```
#[derive(Debug)]
pub struct RamFlash<'a, const PAGE: usize> {
    bytes: &'a mut [u8],
}

/// Why a [`RamFlash`] operation was refused.
///
/// ```
/// use embedded_storage::nor_flash::NorFlash;
/// use inkling_core::user_memory::{RamFlash, RamFlashError};
/// let mut bytes = [0u8; 256];
/// let mut flash = RamFlash::<256>::new(&mut bytes);
/// assert_eq!(flash.erase(0, 512), Err(RamFlashError::OutOfBounds));
/// assert_eq!(flash.write(1, &[0; 4]), Err(RamFlashError::NotAligned));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RamFlashError {
    /// An address or length is not a multiple of the write or erase size.
    NotAligned,
    /// The operation reaches past the buffer.
    OutOfBounds,
}

impl NorFlashError for RamFlashError {
    fn kind(&self) -> NorFlashErrorKind {
        match self {
            RamFlashError::NotAligned => NorFlashErrorKind::NotAligned,
            RamFlashError::OutOfBounds => NorFlashErrorKind::OutOfBounds,
        }
    }
}

impl<'a, const PAGE: usize> RamFlash<'a, PAGE> {
    /// A flash over `bytes` (their contents are the flash's: give `0xFF` for erased).
    ///
    /// ```
    /// let mut bytes = [0xFFu8; 1024];
    /// let flash = inkling_core::user_memory::RamFlash::<512>::new(&mut bytes);
    /// assert_eq!(flash.bytes().len(), 1024);
    /// ```
    pub fn new(bytes: &'a mut [u8]) -> Self {
        RamFlash { bytes }
    }

    /// The flash's bytes.
    ///
    /// ```
    /// let mut bytes = [0xFFu8; 256];
    /// let flash = inkling_core::user_memory::RamFlash::<256>::new(&mut bytes);
    /// assert!(flash.bytes().iter().all(|&b| b == 0xFF));
    /// ```
    pub fn bytes(&self) -> &[u8] {
        self.bytes
    }

    fn span(&mut self, offset: u32, len: usize) -> Result<&mut [u8], RamFlashError> {
        let start = offset as usize;
        let end = start.checked_add(len).ok_or(RamFlashError::OutOfBounds)?;
        self.bytes
            .get_mut(start..end)
            .ok_or(RamFlashError::OutOfBounds)
    }
}

impl<const PAGE: usize> ErrorType for RamFlash<'_, PAGE> {
    type Error = RamFlashError;
}

impl<const PAGE: usize> ReadNorFlash for RamFlash<'_, PAGE> {
    const READ_SIZE: usize = 1;

    fn read(&mut self, offset: u32, bytes: &mut [u8]) -> Result<(), RamFlashError> {
        let span = self.span(offset, bytes.len())?;
        bytes.copy_from_slice(span);
        Ok(())
    }

    fn capacity(&self) -> usize {
        self.bytes.len()
    }
}

impl<const PAGE: usize> NorFlash for RamFlash<'_, PAGE> {
    const WRITE_SIZE: usize = 4;
    const ERASE_SIZE: usize = PAGE;

    fn erase(&mut self, from: u32, to: u32) -> Result<(), RamFlashError> {
        let (from, to) = (from as usize, to as usize);
        if PAGE == 0 || !from.is_multiple_of(PAGE) || !to.is_multiple_of(PAGE) || to < from {
            return Err(RamFlashError::NotAligned);
        }
        self.span(from as u32, to - from)?.fill(0xFF);
        Ok(())
    }

    fn write(&mut self, offset: u32, bytes: &[u8]) -> Result<(), RamFlashError> {
        if !(offset as usize).is_multiple_of(Self::WRITE_SIZE)
            || !bytes.len().is_multiple_of(Self::WRITE_SIZE)
        {
            return Err(RamFlashError::NotAligned);
        }
        for (cell, &b) in self.span(offset, bytes.len())?.iter_mut().zip(bytes) {
            *cell &= b;
        }
        Ok(())
    }
}
