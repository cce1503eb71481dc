//! Word completion on an ESP32-C3 development board (RV32IMC at 160 MHz, no FPU).
//!
//! The program is `inkling_firmware_example::board_typing::run`; this file is the board:
//! clock, cycle counter, serial port (UART0 on GPIO21 TX and GPIO20 RX, 115 200 baud: the
//! board's USB-to-UART bridge) and the 4 × 3 keypad's pins (rows GPIO0, GPIO1, GPIO3, GPIO4,
//! columns GPIO5, GPIO6, GPIO7 with pull-ups; GPIO2, 8 and 9 are strapping pins, 18 and 19
//! the USB). `cargo run --release` flashes it through the built-in USB-JTAG; a serial
//! terminal on the bridge's port shows the suggestions and takes typing.
//!
//! Cycles: the ESP32-C3 has no `mcycle` CSR; its machine performance counter (`mpcer`
//! 0x7E0 selects the event, `mpcmr` 0x7E1 enables it, `mpccr` 0x7E2 counts, 32 bits) counts
//! clock cycles when event bit 0 is selected (ESP32-C3 Technical Reference Manual, from
//! memory).
#![no_std]
#![no_main]

use esp_hal::clock::CpuClock;
use esp_hal::delay::Delay;
use esp_hal::gpio::{Input, InputConfig, Level, Output, OutputConfig, Pull};
use esp_hal::uart::{Config as UartConfig, Uart};
use inkling_core::session::StaticSessionBuffers;
use inkling_firmware_example::board_typing;

esp_bootloader_esp_idf::esp_app_desc!();

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
    loop {}
}

/// Starts the machine performance counter on clock cycles.
fn start_cycle_counter() {
    // SAFETY: writes the counter's own control registers.
    unsafe {
        core::arch::asm!("csrw 0x7E0, {0}", "csrw 0x7E1, {0}", in(reg) 1u32);
    }
}

/// The cycle counter now (32 bits: it wraps every 27 s at 160 MHz).
fn cycle_count() -> u32 {
    let count: u32;
    // SAFETY: reads a counter.
    unsafe { core::arch::asm!("csrr {0}, 0x7E2", out(reg) count) };
    count
}

#[esp_hal::main]
fn main() -> ! {
    // 160 MHz from the PLL; the HAL sets up the flash cache the image is read through.
    let peripherals = esp_hal::init(esp_hal::Config::default().with_cpu_clock(CpuClock::max()));
    start_cycle_counter();
    let (mut high, mut last) = (0u64, 0u32);
    let cycles = move || {
        let now = cycle_count();
        if now < last {
            high += 1 << 32;
        }
        last = now;
        high + u64::from(now)
    };

    // 115 200 baud, 8 data bits, no parity, 1 stop bit: the HAL's default.
    let serial = Uart::new(peripherals.UART0, UartConfig::default())
        .unwrap()
        .with_rx(peripherals.GPIO20)
        .with_tx(peripherals.GPIO21);
    let output = || OutputConfig::default();
    let input = || InputConfig::default().with_pull(Pull::Up);
    let rows = [
        Output::new(peripherals.GPIO0, Level::High, output()),
        Output::new(peripherals.GPIO1, Level::High, output()),
        Output::new(peripherals.GPIO3, Level::High, output()),
        Output::new(peripherals.GPIO4, Level::High, output()),
    ];
    let columns = [
        Input::new(peripherals.GPIO5, input()),
        Input::new(peripherals.GPIO6, input()),
        Input::new(peripherals.GPIO7, input()),
    ];
    board_typing::run::<SUGGESTIONS, SESSION_FLOATS, WORK_LEN, ACT_LEN>(
        &IMAGE.0,
        &WORD_LISTS,
        &BUFFERS,
        serial,
        (rows, columns),
        Delay::new(),
        cycles,
    )
}
