//! Word completion on an ST Nucleo-F411RE (STM32F411, Cortex-M4F at 100 MHz).
//!
//! At start-up it types a scenario text and writes each keystroke's suggestions and its
//! cycles (the DWT cycle counter) over RTT; then a 4 × 3 keypad (rows on PA0, PA1, PA4, PB0,
//! columns on PC1, PC0, PA10 with pull-ups) drives 12-key entry: digits spell the word, `0`
//! takes the first word offered, `*` takes a key back, `#` starts afresh. `cargo run
//! --release` flashes it through the on-board ST-LINK and shows the RTT output.
#![no_std]
#![no_main]

use cortex_m::peripheral::DWT;
use cortex_m_rt::entry;
use embedded_hal::delay::DelayNs;
use inkling_core::session::{SearchOptions, StaticSessionBuffers, DEFAULT_HISTORY};
use inkling_core::Model;
use inkling_firmware_example::board_typing::{type_text, write_figure, KeyEntry};
use inkling_firmware_example::keypad::Keypad;
use inkling_firmware_example::rtt_output::RttOutput;
use stm32f4xx_hal::{pac, prelude::*, rcc::Config};

// SUGGESTIONS, SESSION_FLOATS, WORK_LEN, ACT_LEN: from the image (the build script).
include!(concat!(env!("OUT_DIR"), "/session_sizes.rs"));

#[repr(C, align(16))]
struct Aligned<T: ?Sized>(T);
static IMAGE: &Aligned<[u8]> = &Aligned(*include_bytes!(env!("INKLING_IMAGE_FILE")));
static BUFFERS: StaticSessionBuffers<SESSION_FLOATS, WORK_LEN, ACT_LEN> =
    StaticSessionBuffers::new();

/// Typed at start-up, for the figures (invented).
const TYPED: &[u8] = b"base, this is the north hut: all well";

#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    loop {
        cortex_m::asm::wfi();
    }
}

#[entry]
fn main() -> ! {
    let channels = rtt_target::rtt_init! { up: { 0: { size: 1024, name: "Terminal" } } };
    let mut out = RttOutput(channels.up.0);
    let dp = pac::Peripherals::take().unwrap();
    let mut cp = cortex_m::Peripherals::take().unwrap();
    // 100 MHz from the internal oscillator through the PLL; the HAL sets the flash wait
    // states (3 at 100 MHz) and turns on the flash's prefetch and caches.
    let mut rcc = dp.RCC.freeze(Config::hsi().sysclk(100.MHz()));
    let mut delay = cp.SYST.delay(&rcc.clocks);
    // The DWT cycle counter: 32 bits, widened here (it wraps every 43 s at 100 MHz).
    cp.DCB.enable_trace();
    cp.DWT.enable_cycle_counter();
    let (mut high, mut last) = (0u64, 0u32);
    let mut cycles = move || {
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
    let mut keypad = Keypad::new(rows, columns).unwrap();

    let start = cycles();
    let model = Model::from_bytes(&IMAGE.0).unwrap();
    let _ = write_figure(&mut out, "validate_cycles", cycles() - start);
    let mut session = BUFFERS
        .session::<_, SUGGESTIONS, DEFAULT_HISTORY>(model)
        .unwrap();
    let options = SearchOptions::new(SUGGESTIONS);
    let _ = type_text(&mut session, &options, TYPED, &mut out, &mut cycles);
    let _ = session.clear();

    let mut entry = KeyEntry::new();
    loop {
        if let Ok(Some(key)) = keypad.scan(&mut delay) {
            let _ = entry.press(key, &mut session, &options, &mut out, &mut cycles);
        }
        delay.delay_ms(5);
    }
}
