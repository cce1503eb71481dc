//! The user memory on the device: a session that learns, its memory kept in flash (a
//! RAM-backed NOR flash here, as QEMU's board has no flash the program may write), read back
//! after a simulated reboot, and the instructions learning adds to each keystroke.
//!
//! It types the start of the scenario's logbook twice from a fresh session: once without a
//! memory, once learning each word, and the phrase ending with it, as it ends (and saving
//! them to flash, one record each), with phrase suggestions verified in passes of
//! `DRAFT_CHUNK` bytes; then drops the memory and the store, reads the flash again as a
//! rebooted device would, and checks the memory is the one saved. Figures on the status
//! log: `memory_keystroke_plain_mean`, `memory_keystroke_learning_mean` (push and the whole
//! search), `memory_added_per_keystroke_mean` and `..._max`, `memory_phrases_offered`,
//! `memory_save_instructions_mean` (per save that wrote something),
//! `memory_load_instructions`, `memory_words_restored`, `memory_phrases_restored`, the RAM
//! of the memory and the flash range, and the cost of verifying a draft:
//! `draft_verify_chunked_instructions_per_byte` (one chunked prefill with the logits at
//! every position) against `draft_verify_stepped_instructions_per_byte` (one step and its
//! logits per byte), both with the top-k check. Exits with status 4 if the memory read back
//! differs.
//! Run it with `tests/firmware/memory_reboot.sh` or `cargo run --release --bin memory_reboot`.
#![no_std]
#![no_main]

#[allow(dead_code)]
#[path = "../status_log.rs"]
mod status_log;

use inkling_core::engine::recurrence::{prefill_checked, step};
use inkling_core::session::draft::in_top_k;
use inkling_core::session::{
    is_boundary, SearchOptions, StaticSessionBuffers, WordList, DEFAULT_HISTORY,
};
use inkling_core::user_memory::cache_blend::DEFAULT_DRAFT_TOP_K;
use inkling_core::user_memory::flash_layout::flash_bytes_needed;
use inkling_core::user_memory::{
    CacheBlend, FlashStore, LearnedText, RamFlash, UserMemory, DEFAULT_CACHE_WEIGHT,
};
use inkling_core::{Model, Scratch};
use inkling_firmware_example::device::exit::{exit, ExitCode};
use inkling_firmware_example::device::{calibrate, entry, InstructionClock, CALIBRATION_LOOPS};

use status_log::StatusLog;

#[cfg(feature = "defmt")]
use defmt_semihosting as _;

// SUGGESTIONS, SESSION_FLOATS, WORK_LEN, ACT_LEN: a session's, from the image's dimensions.
include!(concat!(env!("OUT_DIR"), "/session_sizes.rs"));
// DRAFT_CHUNK, DRAFT_WORK_LEN, DRAFT_ACT_LEN: the scratch for a draft's passes.
include!(concat!(env!("OUT_DIR"), "/draft_sizes.rs"));

/// Bytes aligned to 16, as the image's payloads expect for direct word loads.
#[repr(C, align(16))]
struct Aligned<T: ?Sized>(T);

/// The model image, in flash.
static IMAGE: &Aligned<[u8]> = &Aligned(*include_bytes!(env!("INKLING_IMAGE_FILE")));

/// The typed text: the first lines of the scenario's logbook (invented), whose names and
/// phrases come back line after line.
const TEXT_FILE: &[u8] = include_bytes!("../../../data/scenario/logbook-heldout.txt");
/// Bytes of it typed (cut back to the end of a line).
const TEXT_BYTES: usize = 600;

/// Words the memory holds.
const WORDS: usize = 64;
/// Phrases the memory holds.
const PHRASES: usize = 32;
/// The draft verified for the cost per byte: a phrase of the logbook (invented).
const DRAFT: &[u8] = b"booked for tonight. Checked the";
/// Flash page (erase unit) of the simulated flash: 1 KB.
const PAGE: usize = 1024;
/// Bytes of the flash range: what the memory needs.
const FLASH_BYTES: usize = flash_bytes_needed(WORDS, PHRASES, PAGE, 4);

/// The session's buffers, handed out once; its scratch takes passes of `DRAFT_CHUNK` bytes.
static BUFFERS: StaticSessionBuffers<SESSION_FLOATS, DRAFT_WORK_LEN, DRAFT_ACT_LEN> =
    StaticSessionBuffers::new();
/// The simulated flash, erased.
static mut FLASH: [u8; FLASH_BYTES] = [0xFF; FLASH_BYTES];
/// The memory, and the one read back after the reboot.
static mut MEMORY: UserMemory<WORDS, PHRASES> = UserMemory::new();
static mut REBOOTED: UserMemory<WORDS, PHRASES> = UserMemory::new();
/// The text typed so far in a line, for the phrase that ends with each word.
static mut TYPED: [u8; 1024] = [0; 1024];

fn fail(log: &mut StatusLog, what: &str, e: &dyn core::fmt::Display, code: ExitCode) -> ! {
    log.failure(what, e);
    exit(code)
}

/// The text typed: [`TEXT_FILE`] up to the last line end within [`TEXT_BYTES`].
fn text() -> &'static [u8] {
    let head = TEXT_FILE.get(..TEXT_BYTES).unwrap_or(TEXT_FILE);
    let end = head
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(head.len(), |p| p + 1);
    head.get(..end).unwrap_or(head)
}

#[entry]
fn main() -> ! {
    let mut log = StatusLog::open();
    log.note("inkling user memory: learning, flash, reboot");
    let Some(clock) = InstructionClock::start() else {
        exit(ExitCode::Internal)
    };
    let calibration_ticks = calibrate(&clock);
    let per_tick =
        (2 * u64::from(CALIBRATION_LOOPS) + calibration_ticks / 2) / calibration_ticks.max(1);
    let since = |start: u64| (clock.ticks() - start) * per_tick;

    let model = match Model::from_bytes(&IMAGE.0) {
        Ok(model) => model,
        Err(e) => fail(&mut log, "built-in image", &e, ExitCode::BadImage),
    };
    // SAFETY: the only references to these statics, taken once; no interrupt touches them.
    let (flash, memory, rebooted, typed) = unsafe {
        (
            &mut *core::ptr::addr_of_mut!(FLASH),
            &mut *core::ptr::addr_of_mut!(MEMORY),
            &mut *core::ptr::addr_of_mut!(REBOOTED),
            &mut *core::ptr::addr_of_mut!(TYPED),
        )
    };
    let buffers = match BUFFERS.take() {
        Ok(buffers) => buffers,
        Err(e) => fail(&mut log, "session buffers", &e, ExitCode::Internal),
    };
    draft_costs(&mut log, &model, &clock, per_tick, buffers);
    let mut session = match buffers.session::<_, SUGGESTIONS, DEFAULT_HISTORY>(model) {
        Ok(session) => session,
        Err(e) => fail(&mut log, "session buffers", &e, ExitCode::Internal),
    };
    log.figure("memory_words_capacity", WORDS as u64);
    log.figure("memory_phrases_capacity", PHRASES as u64);
    log.figure(
        "memory_ram_bytes",
        UserMemory::<WORDS, PHRASES>::RAM_BYTES as u64,
    );
    log.figure("memory_flash_bytes", FLASH_BYTES as u64);

    let mut store = match FlashStore::new(RamFlash::<PAGE>::new(flash), 0..FLASH_BYTES as u32) {
        Ok(store) => store,
        Err(e) => fail(&mut log, "flash store", &e, ExitCode::Internal),
    };
    if let Err(e) = store.load(memory) {
        fail(&mut log, "loading the memory", &e, ExitCode::Internal)
    }

    let plain = SearchOptions::new(SUGGESTIONS);
    let mut plain_costs = [0u64; 2048];
    let mut keys = 0usize;
    let (mut plain_sum, mut learning_sum, mut added_max) = (0u64, 0u64, 0u64);
    let (mut saves, mut save_sum, mut phrases_offered) = (0u64, 0u64, 0u64);
    for learning in [false, true] {
        if let Err(e) = session.clear() {
            fail(&mut log, "clearing the session", &e, ExitCode::Internal)
        }
        for (i, &b) in text().iter().enumerate() {
            if learning && is_boundary(b) {
                let start = clock.ticks();
                memory.learn(session.word(), &WordList::EMPTY);
                memory.learn_phrase(typed.get(..i).unwrap_or(&[]), &WordList::EMPTY);
                match store.save(memory) {
                    Ok(0) => {}
                    Ok(_) => {
                        saves += 1;
                        save_sum += since(start);
                    }
                    Err(e) => fail(&mut log, "saving the memory", &e, ExitCode::Internal),
                }
            }
            let start = clock.ticks();
            if let Err(e) = session.push(b) {
                if !matches!(e, inkling_core::Error::CapacityExceeded { .. }) {
                    fail(&mut log, "typing", &e, ExitCode::Internal)
                }
            }
            let options = SearchOptions {
                memory: learning.then(|| CacheBlend::new(memory, DEFAULT_CACHE_WEIGHT)),
                ..plain
            };
            match session.suggest(&options) {
                Ok(found) => phrases_offered += u64::from(found.phrase.is_some()),
                Err(e) => fail(&mut log, "suggesting", &e, ExitCode::Internal),
            }
            let cost = since(start);
            if let Some(slot) = typed.get_mut(i) {
                *slot = b;
            }
            if learning {
                learning_sum += cost;
                let before = plain_costs.get(i).copied().unwrap_or(0);
                added_max = added_max.max(cost.saturating_sub(before));
            } else {
                plain_sum += cost;
                if let Some(slot) = plain_costs.get_mut(i) {
                    *slot = cost;
                }
                keys += 1;
            }
        }
    }
    let keys = keys.max(1) as u64;
    log.figure("memory_keystrokes", keys);
    log.figure("memory_keystroke_plain_mean", plain_sum / keys);
    log.figure("memory_keystroke_learning_mean", learning_sum / keys);
    log.figure(
        "memory_added_per_keystroke_mean",
        learning_sum.saturating_sub(plain_sum) / keys,
    );
    log.figure("memory_added_per_keystroke_max", added_max);
    log.figure("memory_phrases_offered", phrases_offered);
    log.figure("memory_save_instructions_mean", save_sum / saves.max(1));

    // Reboot: the memory and the store are gone; only the flash's bytes remain.
    let saved = memory.clone();
    memory.clear();
    let flash = store.into_flash();
    let start = clock.ticks();
    let mut store = match FlashStore::new(flash, 0..FLASH_BYTES as u32) {
        Ok(store) => store,
        Err(e) => fail(&mut log, "flash store after reboot", &e, ExitCode::Internal),
    };
    if let Err(e) = store.load(rebooted) {
        fail(&mut log, "loading after reboot", &e, ExitCode::Internal)
    }
    log.figure("memory_load_instructions", since(start));
    log.figure("memory_words_restored", rebooted.len() as u64);
    log.figure("memory_phrases_restored", rebooted.phrases().len() as u64);
    let same = same_texts(rebooted.words(), saved.words())
        && same_texts(rebooted.phrases(), saved.phrases());
    if !same {
        log.note("the memory read back after the reboot differs from the one saved");
        exit(ExitCode::Internal)
    }
    log.note("the memory survived the reboot");
    exit(ExitCode::Success)
}

/// Whether two lists of learned texts hold the same texts, counts and times in order.
fn same_texts<const L: usize>(a: &[LearnedText<L>], b: &[LearnedText<L>]) -> bool {
    a.len() == b.len()
        && a.iter().zip(b).all(|(a, b)| {
            a.text() == b.text() && a.count() == b.count() && a.last_used() == b.last_used()
        })
}

/// The cost of verifying [`DRAFT`] after a state: one chunked prefill handing over the
/// logits at every position, against one step per byte, each with the top-k check of every
/// byte (all accepted, so every position's logits are computed either way). Both on an f32
/// state from the session's buffer, before the session takes it.
fn draft_costs(
    log: &mut StatusLog,
    model: &Model<'_>,
    clock: &InstructionClock,
    per_tick: u64,
    buffers: &mut inkling_core::session::SessionBuffers<
        [f32; SESSION_FLOATS],
        [f32; DRAFT_WORK_LEN],
        [i16; DRAFT_ACT_LEN],
    >,
) {
    let since = |start: u64| (clock.ticks() - start) * per_tick;
    let dims = *model.dims();
    let state = buffers
        .floats
        .get_mut(..dims.state_len())
        .unwrap_or(&mut []);
    let bytes = DRAFT.get(..DRAFT.len() - 1).unwrap_or(&[]);
    let mut chunked = match Scratch::new(&dims, &mut buffers.work, &mut buffers.act) {
        Ok(scratch) => scratch,
        Err(e) => fail(log, "draft scratch", &e, ExitCode::Internal),
    };
    if chunked.chunk_capacity() != DRAFT_CHUNK {
        log.note("the draft scratch does not take the passes it was sized for");
        exit(ExitCode::Internal)
    }
    log.figure("draft_chunk_bytes", DRAFT_CHUNK as u64);
    log.figure("draft_verified_bytes", bytes.len() as u64);
    state.fill(0.0);
    let mut accepted = 0usize;
    let start = clock.ticks();
    let fed = prefill_checked(model, &mut *state, &mut chunked, bytes, |i, logits| {
        let next = DRAFT.get(i + 1).copied().unwrap_or(0);
        accepted += usize::from(in_top_k(logits, next, DEFAULT_DRAFT_TOP_K));
        true
    });
    let chunked_cost = since(start);
    if let Err(e) = fed {
        fail(log, "draft prefill", &e, ExitCode::Internal)
    }
    // The one-byte scratch a session without drafts takes.
    let work = buffers.work.get_mut(..WORK_LEN).unwrap_or(&mut []);
    let act = buffers.act.get_mut(..ACT_LEN).unwrap_or(&mut []);
    let mut single = match Scratch::new(&dims, work, act) {
        Ok(scratch) => scratch,
        Err(e) => fail(log, "step scratch", &e, ExitCode::Internal),
    };
    state.fill(0.0);
    let start = clock.ticks();
    for (i, &b) in bytes.iter().enumerate() {
        match step(model, &mut *state, &mut single, b) {
            Ok(logits) => {
                let next = DRAFT.get(i + 1).copied().unwrap_or(0);
                accepted += usize::from(in_top_k(logits, next, DEFAULT_DRAFT_TOP_K));
            }
            Err(e) => fail(log, "draft step", &e, ExitCode::Internal),
        }
    }
    let stepped_cost = since(start);
    let n = bytes.len().max(1) as u64;
    log.figure("draft_bytes_in_top_k_both_ways", accepted as u64);
    log.figure(
        "draft_verify_chunked_instructions_per_byte",
        chunked_cost / n,
    );
    log.figure(
        "draft_verify_stepped_instructions_per_byte",
        stepped_cost / n,
    );
}
