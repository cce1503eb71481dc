//! SysTick as a free-running 64-bit counter of core clock cycles, on any Cortex-M: the
//! QEMU programs' instruction clock (QEMU's SysTick ticks once per 40 instructions, see
//! `device`), and the cycle counter of the board profiles on the M0+, which has no DWT
//! cycle counter.
//!
//! SysTick is 24 bits wide and wraps every 2^24 ticks (0.13 s at 125 MHz); its exception
//! counts the wraps so that long measurements stay right.

use core::sync::atomic::{AtomicU32, Ordering};

use cortex_m::peripheral::syst::SystClkSource;
use cortex_m::peripheral::{SCB, SYST};
use cortex_m_rt::exception;

const RELOAD: u32 = 0x00FF_FFFF;

/// SysTick wraps so far (a load and a store: the M0+ has no atomic read-modify-write, and
/// the reader masks the exception).
static WRAPS: AtomicU32 = AtomicU32::new(0);

#[exception]
fn SysTick() {
    WRAPS.store(WRAPS.load(Ordering::Relaxed) + 1, Ordering::Relaxed);
}

/// SysTick from the core clock, with its wraps counted.
pub struct SysTickClock {
    _syst: SYST,
}

impl SysTickClock {
    /// Starts SysTick from the core clock, counting down from the top, with its wrap
    /// exception enabled; `None` if the core peripherals were taken before.
    pub fn start() -> Option<Self> {
        let mut syst = cortex_m::Peripherals::take()?.SYST;
        syst.disable_counter();
        syst.set_clock_source(SystClkSource::Core);
        syst.set_reload(RELOAD);
        syst.clear_current();
        syst.enable_interrupt();
        syst.enable_counter();
        // The counter loads the reload value on its first tick after being cleared.
        while SYST::get_current() == 0 {}
        Some(SysTickClock { _syst: syst })
    }

    /// Ticks since [`SysTickClock::start`].
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
