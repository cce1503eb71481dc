//! RISC-V RV32IMC (QEMU's `virt` board in machine mode): start-up from riscv-rt, semihosting
//! by the `slli`/`ebreak`/`srai` sequence, and the `minstret` counter (instructions retired)
//! as the instruction clock.
//!
//! Under `-icount shift=0` QEMU's `minstret` counts exactly the instructions executed, so a
//! tick is one instruction; [`calibrate`] checks it at start-up. On a board, `mcycle` counts
//! cycles instead (what the program should read to turn counts into time there).

use core::ptr::addr_of;

pub use riscv_rt::entry;

use super::exit::{fault, ExitCode};
use super::CALIBRATION_LOOPS;

/// The core this build is for, as `run.sh --core` names it.
pub const CORE: &str = "riscv32imc";

/// Any exception (illegal instruction, misaligned or faulting access) ends the run.
#[export_name = "ExceptionHandler"]
fn exception_handler(_frame: &riscv_rt::TrapFrame) -> ! {
    fault(
        b"exception",
        riscv::register::mepc::read() as u32,
        ExitCode::Fault,
    )
}

/// `minstret` as a 64-bit counter.
pub struct InstructionClock;

impl InstructionClock {
    /// The counter runs from reset: nothing to start. Always `Some` (the same signature as
    /// on Arm, where the peripherals can be taken only once).
    pub fn start() -> Option<Self> {
        Some(InstructionClock)
    }

    /// Instructions retired since reset.
    pub fn ticks(&self) -> u64 {
        riscv::register::minstret::read64()
    }
}

/// Runs a loop of exactly `2 * CALIBRATION_LOOPS` instructions (`addi`, `bnez`) and returns
/// the ticks it took.
pub fn calibrate(clock: &InstructionClock) -> u64 {
    let start = clock.ticks();
    // SAFETY: touches only its own register.
    unsafe {
        core::arch::asm!(
            "2:",
            "addi {n}, {n}, -1",
            "bnez {n}, 2b",
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
    riscv_semihosting::syscall(op, arg)
}

extern "C" {
    static __estack: u32;
    static _stack_start: u32;
}

/// The lowest and one past the highest address of the stack: riscv-rt puts it at the top
/// of the stack region (RAM here), growing down to `__estack` (the end of the statics).
pub fn stack_bounds() -> (usize, usize) {
    // Only the addresses of the linker symbols are taken.
    (addr_of!(__estack) as usize, addr_of!(_stack_start) as usize)
}

/// The stack pointer now.
#[inline(always)]
pub fn stack_pointer() -> usize {
    let sp: usize;
    // SAFETY: reads a register.
    unsafe { core::arch::asm!("mv {}, sp", out(reg) sp, options(nomem, nostack)) };
    sp
}

/// Waits for an interrupt, for ever.
pub fn halt() -> ! {
    loop {
        riscv::asm::wfi();
    }
}
