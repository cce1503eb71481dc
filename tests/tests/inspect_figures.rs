//! `inkling inspect` reports the flash and RAM the engine and a session really take: each
//! figure is checked against what the core itself refuses to run with one element less.

use inkling_core::session::Session;
use inkling_core::{Engine, Error, Model, Scratch};
use inkling_host::commands::train::Preset;
use inkling_tests::bench_models::preset_model;
use inkling_tests::inkling_cli::run_json;

/// The `needed` of a `BufferTooSmall` error, or a panic naming what came instead.
fn needed(result: Result<(), Error>, buffer: &str) -> usize {
    match result {
        Err(Error::BufferTooSmall { needed, .. }) => needed,
        other => panic!("{buffer}: expected BufferTooSmall, got {other:?}"),
    }
}

#[test]
fn inspect_figures_match_the_engine() {
    let dir = tempfile::tempdir().unwrap();
    for preset in [Preset::Tiny, Preset::Small] {
        let (_, image) = preset_model(preset, 3, dir.path());
        let path = dir.path().join(format!("{}.inkl", preset.name()));
        std::fs::write(&path, &image).unwrap();
        let report = run_json([
            "inspect".as_ref(),
            path.as_os_str(),
            "--beams".as_ref(),
            "3".as_ref(),
            "--json".as_ref(),
        ]);
        let model = Model::from_bytes(&image).unwrap();
        let d = *model.dims();

        // Flash: the image is read in place, so it is the file.
        assert_eq!(
            report["flash_bytes"].as_u64().unwrap() as usize,
            image.len()
        );

        // State: the engine refuses a state one element short of the reported size.
        let state_floats = report["ram"]["state_bytes"].as_u64().unwrap() as usize / 4;
        let mut work = vec![0.0f32; d.work_len()];
        let mut act = vec![0i16; d.act_len()];
        let mut short = vec![0.0f32; state_floats - 1];
        let scratch = Scratch::new(&d, &mut work, &mut act).unwrap();
        assert_eq!(
            needed(
                Engine::from_parts(model, &mut short, scratch).map(|_| ()),
                "state"
            ),
            state_floats
        );

        // Scratch: work (f32) and activations (i16), each refused one element short.
        let scratch_bytes = report["ram"]["scratch_bytes"].as_u64().unwrap() as usize;
        let mut w_short = vec![0.0f32; d.work_len() - 1];
        let work_needed = needed(Scratch::new(&d, &mut w_short, &mut act).map(|_| ()), "work");
        let mut a_short = vec![0i16; d.act_len() - 1];
        let act_needed = needed(Scratch::new(&d, &mut work, &mut a_short).map(|_| ()), "act");
        assert_eq!(scratch_bytes, 4 * work_needed + 2 * act_needed);

        // A session with 3 suggestions: its state buffer is refused one element short, and
        // the reported session RAM covers that buffer, the scratch and the session itself.
        let mut floats = vec![0.0f32; d.session_floats(3) - 1];
        let scratch = Scratch::new(&d, &mut work, &mut act).unwrap();
        let floats_needed = needed(
            Session::<_, 3>::new(model, &mut floats, scratch).map(|_| ()),
            "session",
        );
        let session = report["ram"]["session"].as_u64().unwrap() as usize;
        let fixed = std::mem::size_of::<Session<'_, Model<'_>, 3>>();
        assert!(
            session >= 4 * floats_needed + scratch_bytes + fixed,
            "{}: session {session} < {} + {scratch_bytes} + {fixed}",
            preset.name(),
            4 * floats_needed
        );
    }
}

/// The `user_memory` object of `inkling inspect --json` on a tiny model, with `options`.
fn inspect_user_memory(options: &[&str]) -> serde_json::Value {
    let dir = tempfile::tempdir().unwrap();
    let (_, image) = preset_model(Preset::Tiny, 3, dir.path());
    let path = dir.path().join("tiny.inkl");
    std::fs::write(&path, &image).unwrap();
    let mut args: Vec<&std::ffi::OsStr> = vec!["inspect".as_ref(), path.as_os_str()];
    args.extend(options.iter().map(std::ffi::OsStr::new));
    args.push("--json".as_ref());
    run_json(args)["user_memory"].clone()
}

#[test]
fn inspect_reports_the_user_memory_that_a_store_really_needs() {
    use inkling_core::session::WordList;
    use inkling_core::user_memory::{FlashStore, RamFlash, UserMemory};
    let memory = &inspect_user_memory(&["--memory-words", "256"]);
    // RAM: the compiler's layout of the type (core::mem::size_of).
    assert_eq!(
        memory["ram_bytes"].as_u64().unwrap() as usize,
        core::mem::size_of::<UserMemory<256>>()
    );
    // Flash: a store of that size holds 256 words of the longest kind, each learned and
    // saved, rewritten many times over, without running out of room.
    let flash = memory["flash_bytes"].as_u64().unwrap() as usize;
    assert_eq!(flash % 4096, 0);
    let mut bytes = vec![0xFFu8; flash];
    let mut store = FlashStore::new(RamFlash::<4096>::new(&mut bytes), 0..flash as u32).unwrap();
    let mut words = Box::new(UserMemory::<256>::new());
    store.load(&mut words).unwrap();
    for round in 0..4u32 {
        for i in 0..256u32 {
            let word = format!("{:a<32}", format!("w{round}x{i}"));
            words.learn(word.as_bytes(), &WordList::EMPTY);
            store.save(&mut words).unwrap();
        }
    }
    assert_eq!(words.len(), 256);
}

#[test]
fn inspect_counts_the_phrases_of_a_user_memory_too() {
    use inkling_core::session::{WordList, MAX_WORD_LEN};
    use inkling_core::user_memory::{FlashStore, RamFlash, UserMemory, MAX_PHRASE_LEN};
    let memory = &inspect_user_memory(&["--memory-words", "64", "--memory-phrases", "32"]);
    assert_eq!(memory["phrases"].as_u64(), Some(32));
    // RAM: the compiler's layout of the type (core::mem::size_of).
    assert_eq!(
        memory["ram_bytes"].as_u64().unwrap() as usize,
        core::mem::size_of::<UserMemory<64, 32>>()
    );
    // Flash: a store of that size holds 64 words and 32 phrases of the longest kinds (words
    // of MAX_WORD_LEN bytes; four words filling MAX_PHRASE_LEN), each learned and saved, many
    // times over.
    let flash = memory["flash_bytes"].as_u64().unwrap() as usize;
    let mut bytes = vec![0xFFu8; flash];
    let mut store = FlashStore::new(RamFlash::<4096>::new(&mut bytes), 0..flash as u32).unwrap();
    let mut learned = Box::new(UserMemory::<64, 32>::new());
    store.load(&mut learned).unwrap();
    let word_len = (MAX_PHRASE_LEN - 3) / 4;
    for round in 0..4u32 {
        for i in 0..64u32 {
            let words: Vec<String> = (0..4)
                .map(|w| format!("{:a<word_len$}", format!("w{round}x{i}y{w}")))
                .collect();
            let phrase = words.join(" ");
            assert!(phrase.len() <= MAX_PHRASE_LEN);
            for word in &words {
                learned.learn(word.as_bytes(), &WordList::EMPTY);
            }
            learned.learn_phrase(phrase.as_bytes(), &WordList::EMPTY);
            let longest = format!("{:a<MAX_WORD_LEN$}", format!("v{round}x{i}"));
            learned.learn(longest.as_bytes(), &WordList::EMPTY);
            store.save(&mut learned).unwrap();
        }
    }
    assert_eq!((learned.words().len(), learned.phrases().len()), (64, 32));
    assert!(learned
        .phrases()
        .iter()
        .all(|p| p.text().len() == 4 * word_len + 3));
}
