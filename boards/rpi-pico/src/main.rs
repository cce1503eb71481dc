//! Word completion on a Raspberry Pi Pico (RP2040, Cortex-M0+ at 125 MHz, no FPU).
//!
//! At start-up it types a scenario text and writes each keystroke's suggestions and its
//! cycles (SysTick from the core clock: the M0+ has no DWT cycle counter) over RTT; then a
//! 4 × 3 keypad (rows on GP2–GP5, columns on GP6–GP8 with pull-ups) drives 12-key entry:
//! digits spell the word, `0` takes the first word offered, `*` takes a key back, `#` starts
//! afresh. `cargo run --release` with a debug probe flashes it and shows the RTT output.
#![no_std]
#![no_main]

use embedded_hal::delay::DelayNs;
use hal::pac;
use inkling_core::session::{SearchOptions, StaticSessionBuffers, DEFAULT_HISTORY};
use inkling_core::Model;
use inkling_firmware_example::board_typing::{type_text, write_figure, KeyEntry};
use inkling_firmware_example::keypad::Keypad;
use inkling_firmware_example::rtt_output::RttOutput;
use inkling_firmware_example::systick_clock::SysTickClock;
use rp2040_hal as hal;

/// The second stage boot loader for the Pico's W25Q080 flash, first in flash.
#[link_section = ".boot2"]
#[used]
pub static BOOT2: [u8; 256] = rp2040_boot2::BOOT_LOADER_W25Q080;

/// The Pico's crystal.
const XTAL_HZ: u32 = 12_000_000;

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

#[hal::entry]
fn main() -> ! {
    let channels = rtt_target::rtt_init! { up: { 0: { size: 1024, name: "Terminal" } } };
    let mut out = RttOutput(channels.up.0);
    let mut pac = pac::Peripherals::take().unwrap();
    let mut watchdog = hal::Watchdog::new(pac.WATCHDOG);
    // 125 MHz from the crystal through the system PLL.
    let clocks = hal::clocks::init_clocks_and_plls(
        XTAL_HZ,
        pac.XOSC,
        pac.CLOCKS,
        pac.PLL_SYS,
        pac.PLL_USB,
        &mut pac.RESETS,
        &mut watchdog,
    )
    .unwrap();
    let mut timer = hal::Timer::new(pac.TIMER, &mut pac.RESETS, &clocks);
    let clock = SysTickClock::start().unwrap();
    let mut cycles = || clock.ticks();

    let sio = hal::Sio::new(pac.SIO);
    let pins = hal::gpio::Pins::new(
        pac.IO_BANK0,
        pac.PADS_BANK0,
        sio.gpio_bank0,
        &mut pac.RESETS,
    );
    let rows = [
        pins.gpio2.into_push_pull_output().into_dyn_pin(),
        pins.gpio3.into_push_pull_output().into_dyn_pin(),
        pins.gpio4.into_push_pull_output().into_dyn_pin(),
        pins.gpio5.into_push_pull_output().into_dyn_pin(),
    ];
    let columns = [
        pins.gpio6.into_pull_up_input().into_dyn_pin(),
        pins.gpio7.into_pull_up_input().into_dyn_pin(),
        pins.gpio8.into_pull_up_input().into_dyn_pin(),
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
        if let Ok(Some(key)) = keypad.scan(&mut timer) {
            let _ = entry.press(key, &mut session, &options, &mut out, &mut cycles);
        }
        timer.delay_ms(5);
    }
}
