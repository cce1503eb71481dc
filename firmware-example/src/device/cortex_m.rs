//! Arm Cortex-M (M4F, and M0+ code on QEMU's Cortex-M3 board): start-up from cortex-m-rt,
//! semihosting by `BKPT 0xAB`, and SysTick as the instruction clock.
//!
//! With `-icount shift=0` QEMU advances its virtual clock by exactly 1 ns per instruction,
//! and the mps2 boards' SysTick counts at 25 MHz from that clock: one tick is 40
//! instructions, deterministic run to run. [`calibrate`] checks the ratio at start-up on a
//! loop of known length. Instruction counts are not cycles: on a board, count cycles with
//! the DWT cycle counter on the M4 (`DWT::cycle_count`, which reads 0 under QEMU) or SysTick
//! from the core clock on the M0+ (which has no DWT counter).

use core::ptr::addr_of;

use cortex_m_rt::{exception, ExceptionFrame};

pub use crate::systick_clock::SysTickClock as InstructionClock;
pub use cortex_m_rt::entry;

use super::exit::{fault, ExitCode};
use super::CALIBRATION_LOOPS;

/// The core this build is for, as `run.sh --core` names it.
#[cfg(target_feature = "dsp")]
pub const CORE: &str = "cortex-m4f";
/// The core this build is for, as `run.sh --core` names it.
#[cfg(not(target_feature = "dsp"))]
pub const CORE: &str = "cortex-m0plus";

#[exception]
unsafe fn HardFault(frame: &ExceptionFrame) -> ! {
    fault(b"hard fault", frame.pc(), ExitCode::Fault)
}

/// Runs a loop of exactly `2 * CALIBRATION_LOOPS` instructions (`subs`, `bne`) and returns
/// the ticks it took.
pub fn calibrate(clock: &InstructionClock) -> u64 {
    let start = clock.ticks();
    // SAFETY: touches only its own register and the flags.
    unsafe {
        core::arch::asm!(
            "2:",
            "subs {n}, #1",
            "bne 2b",
            n = inout(reg) CALIBRATION_LOOPS => _,
            options(nomem, nostack),
        );
    }
    clock.ticks() - start
}

/// One semihosting call: operation `op` with its parameter block.
///
/// # Safety
/// `arg` must be the block `op` expects, with every pointer in it valid for the call.
pub unsafe fn semihosting<T>(op: usize, arg: &T) -> usize {
    cortex_m_semihosting::syscall(op, arg)
}

extern "C" {
    static _stack_end: u32;
    static _stack_start: u32;
}

/// The lowest and one past the highest address of the stack: cortex-m-rt puts it at the
/// top of RAM, growing down to `_stack_end` (the end of the statics).
pub fn stack_bounds() -> (usize, usize) {
    // Only the addresses of the linker symbols are taken.
    (
        addr_of!(_stack_end) as usize,
        addr_of!(_stack_start) as usize,
    )
}

/// The stack pointer now.
#[inline(always)]
pub fn stack_pointer() -> usize {
    cortex_m::register::msp::read() as usize
}

/// Waits for an interrupt, for ever.
pub fn halt() -> ! {
    loop {
        cortex_m::asm::wfi();
    }
}
