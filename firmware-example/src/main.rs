//! The measurement harness: word completion on a microcontroller (Cortex-M4F, Cortex-M0+ or
//! RV32IMC, the same program for each), typed input in, suggestions out, every part timed.
//! The program to start from is `src/bin/minimal.rs`; this one adds the measurements.
//!
//! Reads typed bytes from the host (semihosting standard input), line by line. Each byte of a
//! line is one keystroke (0x08 and 0x7F are backspace); after each, it writes one line: the
//! text typed so far and the completions of the current word with their log-probabilities
//! (see [`inkling_firmware_example::suggestion_line`]). The end of a line clears the text.
//! Each keystroke's instructions go to the status log (`figure keystroke N`). When the
//! input ends it types the same lines again as 12-key entry (each key press a
//! `Session::keys` call, `figure keypress N`), measures the engine and reports the figures
//! on the status log, then exits QEMU with status 0. What differs between the cores is in
//! the library's `device` module.
//!
//! The model image is built in from flash (`INKLING_IMAGE` at build time) and never copied,
//! and so are the deny list and the lexicon of the search (`INKLING_DENY`, `INKLING_LEXICON`;
//! see [`inkling_firmware_example::flash_word_lists`]); all RAM is in statics sized from the
//! image's dimensions, plus the stack.
#![no_std]
#![no_main]

mod stack_paint;
mod status_log;
mod step_split;

use inkling_core::engine::recurrence::{prefill, step};
use inkling_core::session::{
    is_boundary, KeyMap, SearchOptions, Session, StaticSessionBuffers, MAX_WORD_LEN,
};
use inkling_core::{Model, Scratch};
use inkling_firmware_example::device::exit::{exit, ExitCode};
use inkling_firmware_example::device::semihosting_io::{HostInput, HostOutput};
use inkling_firmware_example::device::{calibrate, entry, InstructionClock, CALIBRATION_LOOPS};
use inkling_firmware_example::line_reader::LineReader;
use inkling_firmware_example::suggestion_line::write_line;

use status_log::StatusLog;

// The defmt transport: frames on semihosting standard output.
#[cfg(feature = "defmt")]
use defmt_semihosting as _;

// SUGGESTIONS, SESSION_FLOATS, WORK_LEN, ACT_LEN: a session's, from the image's dimensions.
include!(concat!(env!("OUT_DIR"), "/session_sizes.rs"));
// CHUNK_WORK_LEN, CHUNK_ACT_LEN: the prefill passes measured here.
include!(concat!(env!("OUT_DIR"), "/harness_sizes.rs"));
// WORD_LISTS: the deny list and the lexicon, in flash.
include!(concat!(env!("OUT_DIR"), "/word_lists.rs"));

/// Bytes aligned to 16, as the image's payloads expect for direct word loads.
#[repr(C, align(16))]
struct Aligned<T: ?Sized>(T);

/// The model image, in flash.
static IMAGE: &Aligned<[u8]> = &Aligned(*include_bytes!(env!("INKLING_IMAGE_FILE")));

/// Activation scratch for a session and for the prefill passes, whichever needs more.
const HARNESS_ACT_LEN: usize = if CHUNK_ACT_LEN > ACT_LEN {
    CHUNK_ACT_LEN
} else {
    ACT_LEN
};

/// The session's states, the engine's work space and its activation scratch, in RAM (.bss).
static BUFFERS: StaticSessionBuffers<SESSION_FLOATS, WORK_LEN, HARNESS_ACT_LEN> =
    StaticSessionBuffers::new();

/// Longest line of typed text; a longer line is cut, and the text cleared there.
const LINE_CAPACITY: usize = 128;

/// Text fed for the per-step and per-byte measurements (invented).
const BENCH_TEXT: &[u8] = b"the keys on this panel offer words as you type them; \
    a small model runs here in fixed memory and never grows.\n";

/// Instructions from a key press to its first suggestions: the search goes on one engine step
/// at a time while the next step still fits, and the rest of it runs afterwards, as it would
/// while no key is pressed (about 78 ms at 64 MHz, at one instruction a cycle).
const LATENCY_LIMIT: u64 = 5_000_000;

/// Backspace keys: ASCII BS and DEL.
fn is_backspace(key: u8) -> bool {
    key == 0x08 || key == 0x7f
}

/// The E.161 key of a lowercase ASCII letter.
fn key_of(letter: u8) -> Option<u8> {
    b"23456789".iter().copied().find(|&k| {
        KeyMap::E161
            .letters(k)
            .is_some_and(|set| set.contains(letter))
    })
}

/// Keystroke figures: count and search steps (the instructions of each keystroke go to the
/// status log one by one, and `run.sh` takes their mean, 95th percentile and maximum).
#[derive(Debug, Default)]
struct KeystrokeCost {
    count: u64,
    search_steps: u64,
}

impl KeystrokeCost {
    fn add(&mut self, search_steps: usize) {
        self.count += 1;
        self.search_steps += search_steps as u64;
    }
}

/// Exits with `code` after logging `e` as the failure of `what`.
fn fail(log: &mut StatusLog, what: &str, e: &dyn core::fmt::Display, code: ExitCode) -> ! {
    log.failure(what, e);
    exit(code)
}

#[entry]
fn main() -> ! {
    stack_paint::paint();
    let mut log = StatusLog::open();
    log.note("inkling firmware example: reading typed bytes from the host");
    let Some(clock) = InstructionClock::start() else {
        exit(ExitCode::Internal)
    };
    log.note(inkling_firmware_example::device::CORE);

    // Instructions per SysTick tick, checked on a loop of known length.
    let calibration_ticks = calibrate(&clock);
    let loop_instructions = 2 * u64::from(CALIBRATION_LOOPS);
    let per_tick = (loop_instructions + calibration_ticks / 2) / calibration_ticks.max(1);
    log.figure("calibration_instructions", loop_instructions);
    log.figure("calibration_ticks", calibration_ticks);
    log.figure("instructions_per_tick", per_tick);
    let since = |start: u64| (clock.ticks() - start) * per_tick;

    let start = clock.ticks();
    let model = match Model::from_bytes(&IMAGE.0) {
        Ok(model) => model,
        Err(e) => fail(&mut log, "built-in image", &e, ExitCode::BadImage),
    };
    log.figure("validate_instructions", since(start));
    let dims = *model.dims();
    log.figure("image_bytes", IMAGE.0.len() as u64);
    let lexicon_bytes = WORD_LISTS.lexicon.map_or(0, <[u8]>::len);
    log.figure(
        "word_lists_bytes",
        (WORD_LISTS.deny.len() + lexicon_bytes) as u64,
    );
    log.figure("state_bytes", dims.state_bytes() as u64);
    log.figure("session_buffer_bytes", 4 * SESSION_FLOATS as u64);
    log.figure("scratch_bytes", dims.scratch_bytes() as u64);
    let statics = 4 * (SESSION_FLOATS + WORK_LEN) + 2 * HARNESS_ACT_LEN;
    log.figure("ram_buffers_bytes", statics as u64);

    let buffers = match BUFFERS.take() {
        Ok(buffers) => buffers,
        Err(e) => fail(&mut log, "session buffers", &e, ExitCode::Internal),
    };
    let (states, work, act) = (&mut buffers.floats, &mut buffers.work, &mut buffers.act);

    // The parts of a step, timed one by one in the engine's own scratch before it takes it.
    let split = step_split::measure(&model, &clock, per_tick, &mut *work, &mut *act);
    log.figure("step_macs", dims.macs_per_step() as u64);
    log.figure("step_matvec_instructions", split.matvec);
    log.figure("step_quantise_instructions", split.quantise);
    log.figure("step_scan_exp_instructions", split.scan_exp);
    // A prefill of the bench text in passes of several bytes (as many as CHUNK_WORK_LEN holds), from a fresh state: the
    // state and the passes' work space borrowed from the session buffer before the session
    // takes it.
    let state_len = dims.state_len().min(states.len());
    let (state, rest) = states.split_at_mut(state_len);
    if let Some(chunk_work) = rest.get_mut(..CHUNK_WORK_LEN) {
        let mut chunked = match Scratch::new(&dims, chunk_work, &mut *act) {
            Ok(chunked) => chunked,
            Err(e) => fail(&mut log, "prefill scratch", &e, ExitCode::Internal),
        };
        state.fill(0.0);
        let start = clock.ticks();
        if let Err(e) = prefill(&model, state, &mut chunked, BENCH_TEXT) {
            fail(&mut log, "engine prefill", &e, ExitCode::Internal)
        }
        log.figure("prefill_chunk_bytes", chunked.chunk_capacity() as u64);
        log.figure(
            "prefill_chunk_instructions_per_byte",
            since(start) / BENCH_TEXT.len() as u64,
        );
    }

    // One engine step, alone, on the same borrowed state, in a scratch of its own.
    let step_instructions = {
        let mut scratch = match Scratch::new(&dims, &mut *work, &mut *act) {
            Ok(scratch) => scratch,
            Err(e) => fail(&mut log, "engine scratch", &e, ExitCode::Internal),
        };
        state.fill(0.0);
        let start = clock.ticks();
        for &b in BENCH_TEXT {
            if let Err(e) = step(&model, state, &mut scratch, b) {
                fail(&mut log, "engine step", &e, ExitCode::Internal)
            }
        }
        since(start) / BENCH_TEXT.len() as u64
    };
    log.figure("step_instructions", step_instructions);

    let mut session: Session<_, SUGGESTIONS> = match buffers.session(model) {
        Ok(session) => session,
        Err(e) => fail(&mut log, "session buffers", &e, ExitCode::Internal),
    };
    let options = match WORD_LISTS.filter() {
        Ok(filter) => SearchOptions {
            filter,
            ..SearchOptions::new(SUGGESTIONS)
        },
        Err(e) => fail(&mut log, "built-in word list", &e, ExitCode::BadImage),
    };

    // Suggestion lines on standard output; with defmt, its frames take standard output, so
    // the lines go to standard error.
    let output = if cfg!(feature = "defmt") {
        HostOutput::stderr()
    } else {
        HostOutput::stdout()
    };
    let (input, mut output) = match (HostInput::open(), output) {
        (Ok(input), Ok(output)) => (input, output),
        (Err(e), _) | (_, Err(e)) => fail(&mut log, "host console", &e, ExitCode::Io),
    };
    let mut lines = LineReader::<_, LINE_CAPACITY>::new(input);
    let mut typed = [0u8; LINE_CAPACITY];
    let mut cost = KeystrokeCost::default();
    let mut presses = KeystrokeCost::default();
    let mut step_cost = step_instructions;
    loop {
        let line = match lines.next_line() {
            Ok(Some(line)) => line,
            Ok(None) => break,
            Err(e) => fail(&mut log, "reading typed input", &e, ExitCode::Io),
        };
        if let Err(e) = session.clear() {
            fail(&mut log, "clearing the session", &e, ExitCode::Internal)
        }
        let mut len = 0usize;
        for &key in line.bytes {
            let start = clock.ticks();
            let edited = if is_backspace(key) {
                session.backspace().map(|deleted| {
                    if deleted {
                        len = len.saturating_sub(1);
                    }
                })
            } else {
                // A refused byte (the word is at its longest) leaves the text as it was.
                session.push(key).map(|()| {
                    if let Some(slot) = typed.get_mut(len) {
                        *slot = key;
                        len += 1;
                    }
                })
            };
            if let Err(e) = edited {
                if !matches!(e, inkling_core::Error::CapacityExceeded { .. }) {
                    fail(&mut log, "typing", &e, ExitCode::Internal)
                }
            }
            // Suggestions within the latency limit, one step at a time while the next fits
            // (a step's cost: the largest seen so far)...
            let mut found = session.suggest_within(&options, 0);
            while found.is_ok()
                && session.is_refining()
                && since(start) + step_cost <= LATENCY_LIMIT
            {
                let before = clock.ticks();
                found = session.refine(&options, 1);
                step_cost = step_cost.max(since(before));
            }
            log.figure("keystroke", since(start));
            // ... then the rest of the search, as while no key is pressed.
            while found.is_ok() && session.is_refining() {
                found = session.refine(&options, usize::MAX);
            }
            log.figure("keystroke_total", since(start));
            let found = match found {
                Ok(found) => found,
                Err(e) => fail(&mut log, "suggesting", &e, ExitCode::Internal),
            };
            cost.add(found.steps);
            if let Err(e) = write_line(&mut output, typed.get(..len).unwrap_or(&[]), &found.list) {
                fail(&mut log, "writing suggestions", &e, ExitCode::Io)
            }
        }
        // The same line as 12-key entry: each word of lowercase letters typed as its E.161
        // keys, one `keys` call per key press, then the word and what follows it pushed as
        // typed (as if its suggestion was taken).
        if let Err(e) = session.clear() {
            fail(&mut log, "clearing the session", &e, ExitCode::Internal)
        }
        let text = typed.get(..len).unwrap_or(&[]);
        for piece in text.split_inclusive(|&b| is_boundary(b)) {
            let word_len = piece.iter().take_while(|&&b| !is_boundary(b)).count();
            let word = piece.get(..word_len).unwrap_or(&[]);
            let mut keys = [0u8; MAX_WORD_LEN];
            let all_keys = word.len() <= MAX_WORD_LEN
                && word
                    .iter()
                    .zip(keys.iter_mut())
                    .all(|(&b, k)| key_of(b).map(|key| *k = key).is_some());
            if all_keys {
                for pressed in 1..=word.len() {
                    let pressed = keys.get(..pressed).unwrap_or(&[]);
                    let start = clock.ticks();
                    let found = session.keys(pressed, &KeyMap::E161, &options);
                    let instructions = since(start);
                    match found {
                        Ok(found) => presses.add(found.steps),
                        Err(e) => fail(&mut log, "12-key entry", &e, ExitCode::Internal),
                    }
                    log.figure("keypress", instructions);
                }
            }
            for &b in piece {
                if let Err(e) = session.push(b) {
                    if !matches!(e, inkling_core::Error::CapacityExceeded { .. }) {
                        fail(&mut log, "typing", &e, ExitCode::Internal)
                    }
                }
            }
        }
    }
    log.figure("keystrokes", cost.count);
    log.figure(
        "keystroke_search_steps_mean",
        cost.search_steps / cost.count.max(1),
    );

    log.figure("keypresses", presses.count);
    log.figure(
        "keypress_search_steps_mean",
        presses.search_steps / presses.count.max(1),
    );

    // Prefill: text fed through the session without asking for suggestions.
    if let Err(e) = session.clear() {
        fail(&mut log, "clearing the session", &e, ExitCode::Internal)
    }
    let start = clock.ticks();
    for &b in BENCH_TEXT {
        if let Err(e) = session.push(b) {
            fail(&mut log, "prefill", &e, ExitCode::Internal)
        }
    }
    log.figure(
        "prefill_instructions_per_byte",
        since(start) / BENCH_TEXT.len() as u64,
    );

    log.figure("stack_used_bytes", stack_paint::high_water_bytes() as u64);
    log.figure("stack_capacity_bytes", stack_paint::capacity_bytes() as u64);
    exit(ExitCode::Success)
}
