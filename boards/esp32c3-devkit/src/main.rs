//! Word completion on an ESP32-C3 development board (RV32IMC at 160 MHz, no FPU).
//!
//! At start-up it types a scenario text and writes each keystroke's suggestions and its
//! cycles over RTT; then a 4 × 3 keypad (rows on GPIO0, GPIO1, GPIO3, GPIO4, columns on
//! GPIO5, GPIO6, GPIO7 with pull-ups; GPIO2, 8 and 9 are strapping pins, 18 and 19 the USB)
//! drives 12-key entry: digits spell the word, `0` takes the first word offered, `*` takes a
//! key back, `#` starts afresh. `cargo run --release`
//! flashes it through the built-in USB-JTAG and shows the RTT output.
//!
//! Cycles: the ESP32-C3 has no `mcycle` CSR; its machine performance counter (`mpcer`
//! 0x7E0 selects the event, `mpcmr` 0x7E1 enables it, `mpccr` 0x7E2 counts, 32 bits) counts
//! clock cycles when event bit 0 is selected (ESP32-C3 Technical Reference Manual, from
//! memory).
#![no_std]
#![no_main]

use embedded_hal::delay::DelayNs;
use esp_hal::clock::CpuClock;
use esp_hal::delay::Delay;
use esp_hal::gpio::{Input, InputConfig, Level, Output, OutputConfig, Pull};
use inkling_core::session::{SearchOptions, StaticSessionBuffers, DEFAULT_HISTORY};
use inkling_core::Model;
use inkling_firmware_example::board_typing::{type_text, write_figure, KeyEntry};
use inkling_firmware_example::keypad::Keypad;
use inkling_firmware_example::rtt_output::RttOutput;

esp_bootloader_esp_idf::esp_app_desc!();

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
    let channels = rtt_target::rtt_init! { up: { 0: { size: 1024, name: "Terminal" } } };
    let mut out = RttOutput(channels.up.0);
    // 160 MHz from the PLL; the HAL sets up the flash cache the image is read through.
    let peripherals = esp_hal::init(esp_hal::Config::default().with_cpu_clock(CpuClock::max()));
    let mut delay = Delay::new();
    start_cycle_counter();
    let (mut high, mut last) = (0u64, 0u32);
    let mut cycles = move || {
        let now = cycle_count();
        if now < last {
            high += 1 << 32;
        }
        last = now;
        high + u64::from(now)
    };

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
