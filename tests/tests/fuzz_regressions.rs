//! Every saved fuzz input replayed through the body of its target: the inputs the fuzzer
//! found (`tests/fuzz-regressions/<target>/`) and the seed corpus (`fuzz/seeds/<target>/`).
//! A body panics on a finding, so a failure here names the target and the file.

use std::path::{Path, PathBuf};

use inkling_core::Model;
use inkling_tests::fuzz_bodies::TARGETS;

fn tests_dir() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// The files of `dir`, sorted; none if it does not exist.
fn files(dir: &Path) -> Vec<PathBuf> {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return Vec::new();
    };
    let mut files: Vec<PathBuf> = entries
        .map(|e| e.expect("a readable folder entry").path())
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    files
}

fn replay(root: &Path) -> usize {
    let mut count = 0;
    for (name, body) in TARGETS {
        for file in files(&root.join(name)) {
            let data = std::fs::read(&file).expect("a readable input");
            let outcome = std::panic::catch_unwind(|| body(&data));
            assert!(outcome.is_ok(), "{name} panics on {}", file.display());
            count += 1;
        }
    }
    count
}

#[test]
fn found_inputs_no_longer_fail() {
    let count = replay(&tests_dir().join("fuzz-regressions"));
    println!("{count} found inputs replayed");
}

#[test]
fn seed_inputs_pass() {
    let count = replay(&tests_dir().join("../fuzz/seeds"));
    assert!(count >= TARGETS.len(), "only {count} seed inputs");
}

/// The image seeds must load, or the fuzzer starts from inputs the reader refuses at once
/// (the format moved on and the seeds were not remade).
#[test]
fn image_seeds_are_current_images() {
    let seeds = files(&tests_dir().join("../fuzz/seeds/image_reader"));
    assert!(!seeds.is_empty());
    for file in seeds {
        let bytes = std::fs::read(&file).expect("a readable seed");
        if let Err(e) = Model::from_bytes(&bytes) {
            panic!("seed {} does not load: {e}", file.display());
        }
    }
}
