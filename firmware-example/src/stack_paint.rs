//! The stack's high-water mark by painting: fill the free stack with a pattern at start-up,
//! and later find the lowest word that no longer holds it.
//!
//! cortex-m-rt puts the stack at the top of RAM, growing down to `_stack_end` (the end of
//! the statics).

use core::ptr::{addr_of, addr_of_mut};

/// The pattern painted (any value the program is unlikely to store at the bottom).
const PAINT: u32 = 0x5A17_C0DE;

/// Bytes below the current stack pointer left unpainted, for the painting code's own use.
const MARGIN: usize = 64;

extern "C" {
    static mut _stack_end: u32;
    static _stack_start: u32;
}

/// Paints the free stack below the current stack pointer. Call it first thing in `main`.
#[inline(always)]
pub fn paint() {
    let sp = cortex_m::register::msp::read() as usize;
    // SAFETY: the words from `_stack_end` up to just below the stack pointer belong to
    // nobody yet: statics end at `_stack_end` and the stack has not grown below `sp`.
    unsafe {
        let mut word = addr_of_mut!(_stack_end);
        let stop = (sp - MARGIN) as *mut u32;
        while word < stop {
            word.write_volatile(PAINT);
            word = word.add(1);
        }
    }
}

/// Bytes of stack used so far at most (since [`paint`]).
pub fn high_water_bytes() -> usize {
    // SAFETY: reads words between the end of the statics and the top of the stack, which
    // are all RAM; only their addresses are taken from the linker symbols.
    unsafe {
        let top = addr_of!(_stack_start) as usize;
        let mut word = addr_of!(_stack_end);
        while (word as usize) < top && word.read_volatile() == PAINT {
            word = word.add(1);
        }
        top - word as usize
    }
}

/// Bytes between the end of the statics and the top of RAM: the most the stack can use.
pub fn capacity_bytes() -> usize {
    // Only the addresses of the linker symbols are taken.
    addr_of!(_stack_start) as usize - addr_of!(_stack_end) as usize
}
