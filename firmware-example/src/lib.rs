//! The parts of the inkling firmware example that its programs share.
//!
//! Board-independent, built for every core and for the host, where they are unit-tested:
//! - [`line_reader`]: typed bytes in, buffered by line, over any `embedded_io::Read`;
//! - [`suggestion_line`]: the one output line per keystroke (typed text, suggestions, scores
//!   as f32 bit patterns), over any `embedded_io::Write`;
//! - [`number_text`]: integers as text without `core::fmt` (which costs flash);
//! - [`keypad`]: a debounced 4×3 key matrix scanner over `embedded-hal` pins, producing the
//!   ITU-T E.161 keys.
//!
//! On the device only: [`device`], what each core does its own way (start-up, the
//! instruction clock, semihosting, exit and fault handling), chosen by target in one place.
#![cfg_attr(not(test), no_std)]

#[cfg(target_os = "none")]
pub mod device;

pub mod keypad;
pub mod line_reader;
pub mod number_text;
pub mod suggestion_line;
