//! An RTT up channel as an `embedded_io::Write`, for the board profiles: the suggestion lines
//! and figures reach the host through the debug probe (`probe-rs run` shows them), with no
//! UART wired.

use core::convert::Infallible;

/// Writes to an RTT up channel. What does not fit in the channel's buffer is dropped (the
/// channel's default mode), so a board without a probe attached never blocks.
pub struct RttOutput(pub rtt_target::UpChannel);

impl embedded_io::ErrorType for RttOutput {
    type Error = Infallible;
}

impl embedded_io::Write for RttOutput {
    fn write(&mut self, buf: &[u8]) -> Result<usize, Infallible> {
        self.0.write(buf);
        Ok(buf.len())
    }

    fn flush(&mut self) -> Result<(), Infallible> {
        Ok(())
    }
}
