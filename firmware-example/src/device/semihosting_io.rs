//! `embedded-io` reader and writers over semihosting (Arm's, and the RISC-V one that takes
//! over its operations), so the program sees the host's standard input and output. On a board without a debugger, a UART driver implementing the
//! same two traits takes their place and nothing else changes.
//!
//! Input comes from the host console `":tt"` opened for reading, through `SYS_READ`
//! (`SYS_READC` hangs or returns spurious zero bytes under QEMU). `SYS_READ` returns the
//! number of bytes it did NOT read; reading nothing means the input has ended.

use super::semihosting;

/// Semihosting operations and open modes (Arm semihosting specification, "Semihosting
/// operations"; from memory).
const SYS_OPEN: usize = 0x01;
const SYS_WRITE: usize = 0x05;
const SYS_READ: usize = 0x06;
/// `fopen` modes "r", "w" and "a" (binary variants are one more).
const MODE_READ: usize = 0;
const MODE_WRITE: usize = 4;
const MODE_APPEND: usize = 8;

/// A semihosting call failed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum HostIoError {
    /// `SYS_OPEN` of the host console failed.
    #[error("semihosting: opening the host console \":tt\" in mode {mode} failed")]
    Open {
        /// The semihosting open mode.
        mode: usize,
    },
    /// `SYS_READ` returned more than it was asked for.
    #[error("semihosting: reading handle {handle} failed")]
    Read {
        /// The host handle.
        handle: usize,
    },
    /// `SYS_WRITE` failed.
    #[error("semihosting: writing handle {handle} failed")]
    Write {
        /// The host handle.
        handle: usize,
    },
}

impl embedded_io::Error for HostIoError {
    fn kind(&self) -> embedded_io::ErrorKind {
        embedded_io::ErrorKind::Other
    }
}

/// Opens the host console; `mode` picks the stream (read: stdin, write: stdout, append:
/// stderr, as QEMU maps them).
fn open_console(mode: usize) -> Result<usize, HostIoError> {
    let name = b":tt\0";
    // SAFETY: the name is NUL-terminated and outlives the call; its length excludes the NUL.
    let block = [name.as_ptr() as usize, mode, name.len() - 1];
    let handle = unsafe { semihosting(SYS_OPEN, &block) };
    if handle as isize == -1 {
        Err(HostIoError::Open { mode })
    } else {
        Ok(handle)
    }
}

/// The host's standard input.
#[derive(Debug)]
pub struct HostInput {
    handle: usize,
}

impl HostInput {
    /// Opens the host's standard input.
    pub fn open() -> Result<Self, HostIoError> {
        open_console(MODE_READ).map(|handle| HostInput { handle })
    }
}

impl embedded_io::ErrorType for HostInput {
    type Error = HostIoError;
}

impl embedded_io::Read for HostInput {
    fn read(&mut self, buf: &mut [u8]) -> Result<usize, HostIoError> {
        // SAFETY: the host writes at most `buf.len()` bytes into `buf`.
        let block = [self.handle, buf.as_mut_ptr() as usize, buf.len()];
        let not_read = unsafe { semihosting(SYS_READ, &block) };
        buf.len().checked_sub(not_read).ok_or(HostIoError::Read {
            handle: self.handle,
        })
    }
}

/// The host's standard output or standard error.
#[derive(Debug)]
pub struct HostOutput {
    handle: usize,
}

impl HostOutput {
    /// Opens the host's standard output.
    pub fn stdout() -> Result<Self, HostIoError> {
        open_console(MODE_WRITE).map(|handle| HostOutput { handle })
    }

    /// Opens the host's standard error.
    pub fn stderr() -> Result<Self, HostIoError> {
        open_console(MODE_APPEND).map(|handle| HostOutput { handle })
    }
}

impl embedded_io::ErrorType for HostOutput {
    type Error = HostIoError;
}

impl embedded_io::Write for HostOutput {
    fn write(&mut self, buf: &[u8]) -> Result<usize, HostIoError> {
        if buf.is_empty() {
            return Ok(0);
        }
        // SAFETY: the host only reads `buf.len()` bytes from `buf`.
        let block = [self.handle, buf.as_ptr() as usize, buf.len()];
        let not_written = unsafe { semihosting(SYS_WRITE, &block) };
        match buf.len().checked_sub(not_written) {
            Some(0) | None => Err(HostIoError::Write {
                handle: self.handle,
            }),
            Some(written) => Ok(written),
        }
    }

    fn flush(&mut self) -> Result<(), HostIoError> {
        // Semihosting writes are synchronous.
        Ok(())
    }
}
