//! The stack's high-water mark by painting: fill the free stack with a pattern at start-up,
//! and later find the lowest word that no longer holds it.
//!
//! The start-up code of every core puts the stack at the top of RAM, growing down to the
//! end of the statics ([`stack_bounds`]).

use inkling_firmware_example::device::{stack_bounds, stack_pointer};

/// The pattern painted (any value the program is unlikely to store at the bottom).
const PAINT: u32 = 0x5A17_C0DE;

/// Bytes below the current stack pointer left unpainted, for the painting code's own use.
const MARGIN: usize = 64;

/// Paints the free stack below the current stack pointer. Call it first thing in `main`.
#[inline(always)]
pub fn paint() {
    let sp = stack_pointer();
    let (bottom, _) = stack_bounds();
    // SAFETY: the words from the end of the statics up to just below the stack pointer
    // belong to nobody yet: the stack has not grown below `sp`.
    unsafe {
        let mut word = bottom as *mut u32;
        let stop = (sp - MARGIN) as *mut u32;
        while word < stop {
            word.write_volatile(PAINT);
            word = word.add(1);
        }
    }
}

/// Bytes of stack used so far at most (since [`paint`]).
pub fn high_water_bytes() -> usize {
    let (bottom, top) = stack_bounds();
    // SAFETY: reads words between the end of the statics and the top of the stack, which
    // are all RAM.
    unsafe {
        let mut word = bottom as *const u32;
        while (word as usize) < top && word.read_volatile() == PAINT {
            word = word.add(1);
        }
        top - word as usize
    }
}

/// Bytes between the end of the statics and the top of RAM: the most the stack can use.
pub fn capacity_bytes() -> usize {
    let (bottom, top) = stack_bounds();
    top - bottom
}
