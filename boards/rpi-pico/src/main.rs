//! Word completion on a Raspberry Pi Pico (RP2040, Cortex-M0+ at 125 MHz, no FPU).
//!
//! The program is `inkling_firmware_example::board_typing::run`; this file is the board:
//! clocks, cycle counter (SysTick from the core clock: the M0+ has no DWT cycle counter),
//! serial port (UART0 on GP0 TX and GP1 RX, 115 200 baud) and the 4 × 3 keypad's pins (rows
//! GP2–GP5, columns GP6–GP8 with pull-ups). `cargo run --release` with a debug probe flashes
//! it; a serial terminal on a USB-serial adapter on GP0/GP1 (the Raspberry Pi Debug Probe has
//! one) shows the suggestions and takes typing.
#![no_std]
#![no_main]

use hal::fugit::RateExtU32;
use hal::pac;
use hal::uart::{DataBits, StopBits, UartConfig, UartPeripheral};
use hal::Clock;
use inkling_core::session::StaticSessionBuffers;
use inkling_firmware_example::board_typing;
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

#[hal::entry]
fn main() -> ! {
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
    let timer = hal::Timer::new(pac.TIMER, &mut pac.RESETS, &clocks);
    let clock = SysTickClock::start().unwrap();

    let sio = hal::Sio::new(pac.SIO);
    let pins = hal::gpio::Pins::new(
        pac.IO_BANK0,
        pac.PADS_BANK0,
        sio.gpio_bank0,
        &mut pac.RESETS,
    );
    let serial = UartPeripheral::new(
        pac.UART0,
        (pins.gpio0.into_function(), pins.gpio1.into_function()),
        &mut pac.RESETS,
    )
    .enable(
        UartConfig::new(115_200.Hz(), DataBits::Eight, None, StopBits::One),
        clocks.peripheral_clock.freq(),
    )
    .unwrap();
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
    board_typing::run::<SUGGESTIONS, SESSION_FLOATS, WORK_LEN, ACT_LEN>(
        &IMAGE.0,
        &WORD_LISTS,
        &BUFFERS,
        serial,
        (rows, columns),
        timer,
        move || clock.ticks(),
    )
}
