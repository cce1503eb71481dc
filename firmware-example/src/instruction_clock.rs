//! Counting executed instructions under QEMU with SysTick.
//!
//! With `-icount shift=0` QEMU advances its virtual clock by exactly 1 ns per instruction,
//! and the mps2-an386 SysTick counts at 25 MHz from that clock: one tick is 40 instructions,
//! deterministic run to run. [`calibrate`] checks the ratio at start-up on a loop of known
//! length. Instruction counts are not cycles: on a board, count cycles with the DWT cycle
//! counter (`DWT::cycle_count`, which reads 0 under QEMU) instead.
//!
//! SysTick is 24 bits wide and wraps every 2^24 ticks (0.67 s of virtual time); its
//! exception counts the wraps so that long measurements stay right.

use core::sync::atomic::{AtomicU32, Ordering};

use cortex_m::peripheral::syst::SystClkSource;
use cortex_m::peripheral::{SCB, SYST};
use cortex_m_rt::exception;

const RELOAD: u32 = 0x00FF_FFFF;

/// SysTick wraps so far.
static WRAPS: AtomicU32 = AtomicU32::new(0);

#[exception]
fn SysTick() {
    WRAPS.fetch_add(1, Ordering::Relaxed);
}

/// SysTick as a free-running 64-bit tick counter.
pub struct InstructionClock {
    _syst: SYST,
}

impl InstructionClock {
    /// Starts SysTick from the core clock, counting down from the top, with its wrap
    /// exception enabled.
    pub fn start(mut syst: SYST) -> Self {
        syst.disable_counter();
        syst.set_clock_source(SystClkSource::Core);
        syst.set_reload(RELOAD);
        syst.clear_current();
        syst.enable_interrupt();
        syst.enable_counter();
        // The counter loads the reload value on its first tick after being cleared.
        while SYST::get_current() == 0 {}
        InstructionClock { _syst: syst }
    }

    /// Ticks since [`InstructionClock::start`].
    pub fn ticks(&self) -> u64 {
        cortex_m::interrupt::free(|_| {
            let mut wraps = WRAPS.load(Ordering::Relaxed);
            let mut current = SYST::get_current();
            if SCB::is_pendst_pending() {
                // It wrapped and the exception is still waiting: count that wrap, and read
                // again since the first read may have been from before it.
                wraps += 1;
                current = SYST::get_current();
            }
            u64::from(wraps) * (u64::from(RELOAD) + 1) + u64::from(RELOAD - current)
        })
    }
}

/// Iterations of the calibration loop (two instructions each).
pub const CALIBRATION_LOOPS: u32 = 2_000_000;

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
