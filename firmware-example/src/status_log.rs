//! The status log: start-up notes and the measured figures, one per line.
//!
//! Plain text on the host's standard error by default (`note TEXT`, `figure NAME VALUE`),
//! the suggestion lines being on standard output. With `--features defmt`, defmt frames on
//! standard output instead (decode them with `defmt-print`), and the suggestion lines move
//! to standard error. Writing the log never stops the program: a
//! failed write is dropped.

#[cfg(not(feature = "defmt"))]
use embedded_io::Write;
#[cfg(not(feature = "defmt"))]
use inkling_firmware_example::device::semihosting_io::HostOutput;
#[cfg(not(feature = "defmt"))]
use inkling_firmware_example::number_text::{decimal_u64, U64_DIGITS};

/// Where notes and figures go.
#[derive(Debug)]
pub struct StatusLog {
    #[cfg(not(feature = "defmt"))]
    out: Option<HostOutput>,
}

impl StatusLog {
    /// Opens the log.
    pub fn open() -> Self {
        StatusLog {
            #[cfg(not(feature = "defmt"))]
            out: HostOutput::stderr().ok(),
        }
    }

    /// A line of text.
    pub fn note(&mut self, text: &str) {
        #[cfg(feature = "defmt")]
        defmt::info!("note {=str}", text);
        #[cfg(not(feature = "defmt"))]
        if let Some(out) = self.out.as_mut() {
            let _ = out.write_all(b"note ");
            let _ = out.write_all(text.as_bytes());
            let _ = out.write_all(b"\n");
        }
    }

    /// A named integer figure.
    pub fn figure(&mut self, name: &str, value: u64) {
        #[cfg(feature = "defmt")]
        defmt::info!("figure {=str} {=u64}", name, value);
        #[cfg(not(feature = "defmt"))]
        if let Some(out) = self.out.as_mut() {
            let mut digits = [0u8; U64_DIGITS];
            let _ = out.write_all(b"figure ");
            let _ = out.write_all(name.as_bytes());
            let _ = out.write_all(b" ");
            let _ = out.write_all(decimal_u64(value, &mut digits));
            let _ = out.write_all(b"\n");
        }
    }

    /// A failure, named by its `Display` text.
    pub fn failure(&mut self, what: &str, why: &dyn core::fmt::Display) {
        #[cfg(feature = "defmt")]
        defmt::error!("{=str}: {}", what, defmt::Display2Format(why));
        #[cfg(not(feature = "defmt"))]
        if let Some(out) = self.out.as_mut() {
            let _ = writeln!(out, "error {what}: {why}");
        }
    }
}
