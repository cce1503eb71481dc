//! Word completion on an ST Nucleo-F411RE (STM32F411, Cortex-M4F at 100 MHz).
//!
//! The program is `inkling_firmware_example::board_typing::run`; this file is the board:
//! clock, cycle counter (DWT), serial port (USART2 on PA2/PA3, the on-board ST-LINK's
//! virtual serial port, 115 200 baud) and the 4 × 3 keypad's pins (rows PA0, PA1, PA4, PB0;
//! columns PC1, PC0, PA10 with pull-ups). `cargo run --release` flashes it through the
//! ST-LINK; a serial terminal on the ST-LINK's port shows the suggestions and takes typing.
#![no_std]
#![no_main]

use cortex_m::peripheral::DWT;
use cortex_m_rt::entry;
use inkling_core::session::StaticSessionBuffers;
use inkling_firmware_example::board_typing;
use inkling_firmware_example::nb_serial::NbSerial;
use stm32f4xx_hal::{pac, prelude::*, rcc::Config};

// SUGGESTIONS, SESSION_FLOATS, WORK_LEN, ACT_LEN: from the image (the build script).
include!(concat!(env!("OUT_DIR"), "/session_sizes.rs"));
// WORD_LISTS: the deny list and the lexicon, in flash (the build script).
include!(concat!(env!("OUT_DIR"), "/word_lists.rs"));

#[repr(C, align(16))]
struct Aligned<T: ?Sized>(T);
static IMAGE: &Aligned<[u8]> = &Aligned(*include_bytes!(env!("INKLING_IMAGE_FILE")));
static BUFFERS: StaticSessionBuffers<SESSION_FLOATS, WORK_LEN, ACT_LEN> =
    StaticSessionBuffers::new();

#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    loop {
        cortex_m::asm::wfi();
    }
}

#[entry]
fn main() -> ! {
    let dp = pac::Peripherals::take().unwrap();
    let mut cp = cortex_m::Peripherals::take().unwrap();
    // 100 MHz from the internal oscillator through the PLL; the HAL sets the flash wait
    // states (3 at 100 MHz) and turns on the flash's prefetch and caches.
    let mut rcc = dp.RCC.freeze(Config::hsi().sysclk(100.MHz()));
    let delay = cp.SYST.delay(&rcc.clocks);
    // The DWT cycle counter: 32 bits, widened here (it wraps every 43 s at 100 MHz).
    cp.DCB.enable_trace();
    cp.DWT.enable_cycle_counter();
    let (mut high, mut last) = (0u64, 0u32);
    let cycles = move || {
        let now = DWT::cycle_count();
        if now < last {
            high += 1 << 32;
        }
        last = now;
        high + u64::from(now)
    };

    let gpioa = dp.GPIOA.split(&mut rcc);
    let gpiob = dp.GPIOB.split(&mut rcc);
    let gpioc = dp.GPIOC.split(&mut rcc);
    let serial = dp
        .USART2
        .serial::<u8>((gpioa.pa2, gpioa.pa3), 115_200.bps(), &mut rcc)
        .unwrap();
    let rows = [
        gpioa.pa0.into_push_pull_output().erase(),
        gpioa.pa1.into_push_pull_output().erase(),
        gpioa.pa4.into_push_pull_output().erase(),
        gpiob.pb0.into_push_pull_output().erase(),
    ];
    let columns = [
        gpioc.pc1.into_pull_up_input().erase(),
        gpioc.pc0.into_pull_up_input().erase(),
        gpioa.pa10.into_pull_up_input().erase(),
    ];
    board_typing::run::<SUGGESTIONS, SESSION_FLOATS, WORK_LEN, ACT_LEN>(
        &IMAGE.0,
        &WORD_LISTS,
        &BUFFERS,
        NbSerial::new(serial),
        (rows, columns),
        delay,
        cycles,
    )
}
