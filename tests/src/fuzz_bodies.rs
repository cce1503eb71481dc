//! The bodies of the fuzz targets under `fuzz/`, kept here so that the fuzz project (which
//! includes this file by path) and the replay of saved inputs
//! (`tests/tests/fuzz_regressions.rs`) run exactly the same code.
//!
//! Each body takes arbitrary bytes and must return without panicking. Besides "no panic" each
//! checks the promises the crates document: a model that loads can be run and read; a typing
//! session behaves as the same text typed afresh; a checkpoint that is accepted converts to an
//! image that loads. A failed check panics, which the fuzzer reports as a finding.

use std::path::Path;

use inkling_core::image::checksum::crc32;
use inkling_core::image::example::tiny_image;
use inkling_core::image::format::{Role, CRC_LEN, VOCAB};
use inkling_core::session::{SearchOptions, Session, SessionBuffers, WordList, MAX_WORD_LEN};
use inkling_core::user_memory::{FlashStore, RamFlash, UserMemory};
use inkling_core::{Dims, Engine, Error, KeyMap, Model, Scratch, Suggestions};
use inkling_quantize::{convert, Checkpoint, ConvertOptions};

/// A fuzz target's body: any bytes in, a panic for a finding.
pub type Body = fn(&[u8]);

/// The fuzz targets by name (the names of the binaries in `fuzz/` and of the folders under
/// `tests/fuzz-regressions/`), with their bodies.
pub const TARGETS: [(&str, Body); 5] = [
    ("image_reader", image_reader),
    ("engine_run", engine_run),
    ("session_edits", session_edits),
    ("checkpoint_loader", checkpoint_loader),
    ("memory_flash", memory_flash),
];

/// Beams of the sessions the bodies run.
const BEAMS: usize = 3;
/// History of the sessions the bodies run: short, so that fuzz inputs reach the case where
/// a backspace recovers from a history that has forgotten older text.
const HISTORY: usize = 40;
/// Bytes of text an engine is run over at most, so that one input stays fast even on the
/// largest model a fuzz input can hold.
const MAX_TEXT: usize = 128;
/// Step budget of the searches, kept small for the same reason.
const MAX_STEPS: usize = 64;
/// Searches per engine input at most, for the same reason.
const MAX_SEARCHES: usize = 4;

/// Rewrites the trailing CRC-32 so that the structural checks behind it are reached.
pub fn restamp(image: &mut [u8]) {
    if let Some(body) = image.len().checked_sub(CRC_LEN) {
        let crc = crc32(&image[..body]);
        image[body..].copy_from_slice(&crc.to_le_bytes());
    }
}

/// Target `image_reader`: [`Model::from_bytes`] on the bytes as given and again with their
/// checksum made right. A model that loads has every tensor readable.
pub fn image_reader(data: &[u8]) {
    read_every_tensor(data);
    let mut stamped = data.to_vec();
    restamp(&mut stamped);
    read_every_tensor(&stamped);
}

fn read_every_tensor(bytes: &[u8]) {
    let Ok(model) = Model::from_bytes(bytes) else {
        return;
    };
    let dims = *model.dims();
    assert_eq!(model.tensors().count(), dims.tensor_count());
    assert_eq!(model.flash_bytes(), bytes.len());
    let mut matrices = vec![model.byte_embed(), model.head()];
    let mut vectors = vec![model.final_norm()];
    for block in 0..dims.blocks {
        for role in Role::BLOCK_ROLES {
            if role.is_quantised() {
                matrices.push(model.block_matrix(block, role));
            } else {
                vectors.push(model.block_floats(block, role));
            }
        }
    }
    for m in matrices {
        for r in 0..m.rows() {
            assert_eq!(m.row(r).len(), m.cols());
            assert!(m.row_scales(r).iter().all(f32::is_finite));
        }
    }
    for v in vectors {
        assert!(v.iter().all(f32::is_finite));
    }
}

/// Target `engine_run`. Input: a little-endian u16 length `L`, `L` bytes of image (its
/// checksum made right) and text. An image that loads is run by an [`Engine`] over the text
/// (at most [`MAX_TEXT`] bytes), state saved and restored halfway, and by a typing session
/// that suggests completions at the first [`MAX_SEARCHES`] word boundaries.
pub fn engine_run(data: &[u8]) {
    let Some((len, rest)) = data.split_first_chunk::<2>() else {
        return;
    };
    let len = usize::from(u16::from_le_bytes(*len)).min(rest.len());
    let (image, text) = rest.split_at(len);
    let text = &text[..text.len().min(MAX_TEXT)];
    let mut image = image.to_vec();
    restamp(&mut image);
    let Ok(model) = Model::from_bytes(&image) else {
        return;
    };
    let dims = *model.dims();
    let mut state = vec![0.0f32; dims.state_len()];
    let mut work = vec![0.0f32; dims.work_len()];
    let mut act = vec![0i16; dims.act_len()];
    let scratch = Scratch::new(&dims, &mut work, &mut act).expect("buffers sized by the model");
    let mut engine =
        Engine::from_parts(model, &mut state, scratch).expect("buffers sized by the model");
    let half = text.len() / 2;
    for &b in &text[..half] {
        assert_eq!(engine.step(b).len(), VOCAB);
    }
    let saved = engine.state().to_vec();
    let tail: Vec<Vec<u32>> = text[half..].iter().map(|&b| bits(engine.step(b))).collect();
    engine.restore(&saved).expect("a state of the right length");
    for (&b, expected) in text[half..].iter().zip(&tail) {
        assert_eq!(&bits(engine.step(b)), expected, "restored state diverged");
    }
    let _ = engine.most_likely_byte();

    let mut buffers = heap_buffers(&dims);
    let mut session = buffers
        .session::<_, BEAMS, HISTORY>(model)
        .expect("buffers sized by the model");
    let options = search_options(BEAMS);
    let mut searches = 0;
    for &b in text {
        match session.push(b) {
            Ok(()) | Err(Error::CapacityExceeded { .. }) => {}
            Err(e) => panic!("push refused with {e}"),
        }
        if session.word().is_empty() && searches < MAX_SEARCHES {
            searches += 1;
            let found = session.suggest(&options).expect("a search within capacity");
            assert!(found.list.len() <= BEAMS && found.steps <= MAX_STEPS);
        }
    }
}

/// Target `session_edits`: a typing session on the tiny example model driven by the bytes as
/// a list of edits (push, runs of bytes, backspace runs, clear, searches, 12-key searches).
/// After each edit the logits are finite and the buffers within capacity; at the end the
/// session equals a fresh one that is given, byte by byte, the text the edited one should
/// hold (the contract of [`Session`]: backspace gives the state of typing the shorter text,
/// recovery across a boundary keeps only the history).
pub fn session_edits(data: &[u8]) {
    let image = tiny_image();
    let model = Model::from_bytes(&image).expect("the example image loads");
    let dims = *model.dims();
    let mut buffers = heap_buffers(&dims);
    let mut session = buffers
        .session::<_, BEAMS, HISTORY>(model)
        .expect("buffers sized by the model");
    // The text the state should stand for.
    let mut seen: Vec<u8> = Vec::new();
    let mut input = data.iter().copied();
    while let Some(op) = input.next() {
        let arg = input.next().unwrap_or(0);
        match op % 8 {
            0..=2 => push(&mut session, &mut seen, arg),
            3 => {
                // Runs of up to 15; a few runs in a row reach back past the history's start.
                for _ in 0..arg % 16 {
                    backspace(&mut session, &mut seen, model);
                }
            }
            4 => {
                session.clear().expect("clear");
                seen.clear();
            }
            5 => {
                let width = usize::from(arg) % (BEAMS + 2);
                let result = session.suggest(&search_options(width));
                check_search(&session, width, result, session.word().len());
            }
            6 => {
                // Mostly letter keys, sometimes any byte (refused unless it is one).
                let keys: Vec<u8> = input
                    .by_ref()
                    .take(usize::from(arg % 8))
                    .map(|k| if k & 0x80 == 0 { b'2' + k % 8 } else { k })
                    .collect();
                let width = usize::from(arg >> 4) % (BEAMS + 1);
                let result = session.keys(&keys, &KeyMap::E161, &search_options(width));
                let ok_keys = keys.iter().all(|&k| (b'2'..=b'9').contains(&k))
                    && session.word().len() + keys.len() <= MAX_WORD_LEN;
                match result {
                    Ok(_) if ok_keys => {
                        check_search(&session, width, result, session.word().len() + keys.len())
                    }
                    Ok(found) => panic!("keys {keys:?} accepted: {found:?}"),
                    Err(_) if !ok_keys || width > BEAMS => {}
                    Err(e) => panic!("keys {keys:?} refused: {e}"),
                }
            }
            _ => {
                for b in input.by_ref().take(usize::from(arg % 64)) {
                    push(&mut session, &mut seen, b);
                }
            }
        }
        assert!(session.logits().iter().all(|v| v.is_finite()));
        assert!(session.word().len() <= MAX_WORD_LEN && session.history().len() <= HISTORY);
    }
    let mut fresh_buffers = heap_buffers(&dims);
    let mut fresh = fresh_buffers
        .session::<_, BEAMS, HISTORY>(model)
        .expect("buffers sized by the model");
    fresh
        .push_bytes(&seen)
        .expect("the text pushes as it did before");
    assert_eq!(bits(fresh.logits()), bits(session.logits()), "logits");
    assert_eq!(fresh.word(), session.word(), "word");
    // An edit inside a word drops a byte from the end of the history, not a new one from
    // the start: the edited history is the end of the fresh one.
    let fresh_history: Vec<u8> = fresh.history().iter().collect();
    let history: Vec<u8> = session.history().iter().collect();
    assert!(fresh_history.ends_with(&history), "history");
}

fn push(session: &mut FuzzSession<'_>, seen: &mut Vec<u8>, b: u8) {
    match session.push(b) {
        Ok(()) => seen.push(b),
        Err(Error::CapacityExceeded { buffer: "word", .. }) => {
            assert_eq!(session.word().len(), MAX_WORD_LEN);
        }
        Err(e) => panic!("push {b} refused: {e}"),
    }
}

fn backspace(session: &mut FuzzSession<'_>, seen: &mut Vec<u8>, model: Model<'_>) {
    let inside_word = !session.word().is_empty();
    let had_history = !session.history().is_empty();
    let deleted = session.backspace().expect("backspace");
    assert_eq!(deleted, had_history);
    if !deleted {
        return;
    }
    seen.pop();
    let history: Vec<u8> = session.history().iter().collect();
    if inside_word || *seen == history {
        return;
    }
    // Across a boundary the state is either restored from the snapshot (the whole text
    // still counts) or, when the snapshot is older than the history, rebuilt from the
    // history alone; these differ only once text has fallen out of the history.
    let dims = *model.dims();
    let mut fresh_buffers = heap_buffers(&dims);
    let mut fresh = fresh_buffers
        .session::<_, BEAMS, HISTORY>(model)
        .expect("buffers sized by the model");
    fresh
        .push_bytes(seen)
        .expect("the text pushes as it did before");
    if bits(fresh.logits()) != bits(session.logits()) {
        *seen = history;
    }
}

fn check_search(
    session: &FuzzSession<'_>,
    width: usize,
    result: Result<Suggestions<BEAMS>, Error>,
    min_len: usize,
) {
    match result {
        Ok(found) => {
            assert!(width <= BEAMS, "width {width} above {BEAMS} accepted");
            assert!(found.list.len() <= width && found.steps <= MAX_STEPS);
            for s in &found.list {
                assert!(s.text.len() >= min_len.min(MAX_WORD_LEN), "{s:?}");
                assert!(s.text.starts_with(session.word()), "{s:?}");
                assert!(s.logprob.is_finite() && s.logprob <= 0.0, "{s:?}");
            }
        }
        Err(e) => assert!(width > BEAMS, "search of width {width} refused: {e}"),
    }
}

/// Target `checkpoint_loader`: [`Checkpoint::from_bytes`] on the bytes. A checkpoint that is
/// accepted converts, and the image it gives loads.
pub fn checkpoint_loader(data: &[u8]) {
    let path = Path::new("fuzz-input.safetensors");
    let Ok(checkpoint) =
        Checkpoint::from_bytes(data, path, &inkling_quantize::ReadOptions::default())
    else {
        return;
    };
    for options in [
        ConvertOptions::default(),
        ConvertOptions {
            group: 4,
            f16_floats: true,
        },
    ] {
        // A refusal is fine as long as it names the fault; an image that does not load is not.
        if let Ok((image, _report)) = convert(&checkpoint, &options) {
            if let Err(e) = Model::from_bytes(&image) {
                panic!("convert {options:?} wrote an image that does not load: {e}");
            }
        }
    }
}

fn search_options(width: usize) -> SearchOptions<'static> {
    SearchOptions {
        max_steps: MAX_STEPS,
        ..SearchOptions::new(width)
    }
}

fn bits(values: &[f32]) -> Vec<u32> {
    values.iter().map(|v| v.to_bits()).collect()
}

/// The session every body runs.
/// The core's session buffers over vectors sized for `dims` and `BEAMS` (the fuzz build has
/// no workstation tools, whose helper does the same).
fn heap_buffers(dims: &Dims) -> SessionBuffers<Vec<f32>, Vec<f32>, Vec<i16>> {
    SessionBuffers::from_parts(
        vec![0.0; dims.session_floats(BEAMS)],
        vec![0.0; dims.work_len()],
        vec![0; dims.act_len()],
    )
}

type FuzzSession<'b> = Session<'b, Model<'b>, BEAMS, HISTORY>;

/// Pages of the flash the `memory_flash` body reads.
pub const MEMORY_FLASH_PAGES: usize = 4;
/// Bytes of a page of that flash.
pub const MEMORY_FLASH_PAGE: usize = 256;
/// Words of the memory it reads into.
const MEMORY_WORDS: usize = 16;
/// Phrases of the memory it reads into.
const MEMORY_PHRASES: usize = 8;
/// The memory it reads into.
type FuzzMemory = UserMemory<MEMORY_WORDS, MEMORY_PHRASES>;

/// Target `memory_flash`: the user memory's flash store reading damaged flash. The bytes are
/// the flash contents ([`MEMORY_FLASH_PAGES`] pages of [`MEMORY_FLASH_PAGE`] bytes; short
/// inputs are padded with erased bytes). Loading gives an error or a memory of distinct,
/// well-formed words and phrases within capacity; a memory that loads takes a new word and
/// phrase and is saved,
/// and reading the flash again gives the same guarantee. (That the word saved is read back
/// is promised only for flash that nothing but the store and power cuts wrote, which the
/// power-cut test checks: the store appends to space it finds erased-looking, and damage
/// inside it can spoil the new record, which the next load then skips.)
pub fn memory_flash(data: &[u8]) {
    let len = MEMORY_FLASH_PAGES * MEMORY_FLASH_PAGE;
    let mut bytes = vec![0xFFu8; len];
    for (b, &d) in bytes.iter_mut().zip(data) {
        *b = d;
    }
    let flash = RamFlash::<MEMORY_FLASH_PAGE>::new(&mut bytes);
    let mut store = FlashStore::new(flash, 0..len as u32).expect("a range of whole pages");
    let mut memory = FuzzMemory::new();
    if !loads_well_formed(&mut store, &mut memory) {
        return;
    }
    memory.learn(b"afterwards", &WordList::EMPTY);
    memory.learn_phrase(b"long afterwards", &WordList::EMPTY);
    if store.save(&mut memory).is_err() {
        return;
    }
    let mut again = FlashStore::new(store.into_flash(), 0..len as u32).expect("same range");
    loads_well_formed(&mut again, &mut FuzzMemory::new());
}

/// Loads `memory` from `store`: on an error the memory is empty, otherwise its words are
/// distinct, well-formed and within capacity. Whether it loaded.
fn loads_well_formed(
    store: &mut FlashStore<RamFlash<'_, MEMORY_FLASH_PAGE>>,
    memory: &mut FuzzMemory,
) -> bool {
    if store.load(memory).is_err() {
        assert!(memory.is_empty(), "a failed load leaves the memory empty");
        return false;
    }
    let words = memory.words();
    assert!(words.len() <= MEMORY_WORDS);
    for (i, w) in words.iter().enumerate() {
        assert!(w.count() > 0 && std::str::from_utf8(w.text()).is_ok());
        assert!((2..=MAX_WORD_LEN).contains(&w.text().len()));
        assert!(
            words[..i].iter().all(|v| v.text() != w.text()),
            "a word twice"
        );
    }
    let phrases = memory.phrases();
    assert!(phrases.len() <= MEMORY_PHRASES);
    for (i, p) in phrases.iter().enumerate() {
        let text = p.text();
        assert!(p.count() > 0 && std::str::from_utf8(text).is_ok());
        assert!(text.len() <= inkling_core::user_memory::MAX_PHRASE_LEN);
        assert!(text.iter().any(|&b| inkling_core::session::is_boundary(b)));
        assert!(
            phrases[..i].iter().all(|q| q.text() != text),
            "a phrase twice"
        );
    }
    true
}
