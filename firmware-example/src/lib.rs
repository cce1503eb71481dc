//! The parts of the inkling firmware example that its programs share.
//!
//! Board-independent, built for every core and for the host, where they are unit-tested:
//! - [`line_reader`]: typed bytes in, buffered by line, over any `embedded_io::Read`;
//! - [`suggestion_line`]: the one output line per keystroke (typed text, suggestions, scores
//!   as f32 bit patterns), over any `embedded_io::Write`;
//! - [`number_text`]: integers as text without `core::fmt` (which costs flash);
//! - [`keypad`]: a debounced 4×3 key matrix scanner over `embedded-hal` pins, producing the
//!   ITU-T E.161 keys;
//! - [`board_typing`]: what a board profile does with a session (a text typed at start-up,
//!   then 12-key presses), writing suggestion lines and cycle counts.
//!
//! On the device only: `device` (feature `qemu`, the default), what each core does its own
//! way under QEMU (start-up, the instruction clock, semihosting, exit and fault handling),
//! chosen by target in one place; `systick_clock` (Cortex-M), SysTick as a 64-bit counter;
//! `rtt_output` (feature `rtt`), an RTT channel as an `embedded_io::Write`.
#![cfg_attr(not(test), no_std)]

pub mod board_typing;
#[cfg(all(target_os = "none", feature = "qemu"))]
pub mod device;
#[cfg(feature = "rtt")]
pub mod rtt_output;
#[cfg(all(target_os = "none", target_arch = "arm"))]
pub mod systick_clock;

pub mod keypad;
pub mod line_reader;
pub mod number_text;
pub mod suggestion_line;
