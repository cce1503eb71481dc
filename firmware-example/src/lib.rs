//! The parts of the inkling firmware example that its programs share.
//!
//! Board-independent, built for every core and for the host, where they are unit-tested:
//! - [`line_reader`]: typed bytes in, buffered by line, over any `embedded_io::Read`;
//! - [`suggestion_line`]: the one output line per keystroke (typed text, suggestions, scores
//!   as f32 bit patterns), over any `embedded_io::Write`;
//! - [`number_text`]: integers as text without `core::fmt` (which costs flash);
//! - [`keypad`]: a debounced 4×3 key matrix scanner over `embedded-hal` pins, producing the
//!   ITU-T E.161 keys;
//! - [`flash_word_lists`]: the deny list and the lexicon built into flash, as the session's
//!   word filter;
//! - [`board_typing`]: the program every board profile runs (a text typed at start-up, then
//!   bytes from a serial terminal and 12-key presses), writing suggestion lines and cycle
//!   counts to the serial port;
//! - [`nb_serial`]: an `embedded-hal-nb` serial port as `embedded_io` streams.
//!
//! On the device only: `device` (feature `qemu`, the default), what each core does its own
//! way under QEMU (start-up, the instruction clock, semihosting, exit and fault handling),
//! chosen by target in one place; `systick_clock` (Cortex-M), SysTick as a 64-bit counter.
#![cfg_attr(not(test), no_std)]

pub mod board_typing;
#[cfg(all(target_os = "none", feature = "qemu"))]
pub mod device;
#[cfg(all(target_os = "none", target_arch = "arm"))]
pub mod systick_clock;

pub mod flash_word_lists;
pub mod keypad;
pub mod line_reader;
pub mod nb_serial;
pub mod number_text;
pub mod suggestion_line;
