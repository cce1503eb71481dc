//! Shared helpers for the cross-crate tests: the `inkling` binary run as a subprocess, the numpy
//! reference scripts under `tests/reference/`, the random checkpoint shapes they are run on, the
//! arithmetic that compares two sets of logits, and the bodies of the fuzz targets.

pub mod bench_models;
pub mod checkpoint_spec;
pub mod fuzz_bodies;
pub mod inkling_cli;
pub mod logits;
pub mod numpy_reference;
pub mod run_seed;

/// About 40 bytes of mixed content: ASCII letters and digits, punctuation, tab and newline,
/// two- and three-byte UTF-8 sequences. Valid UTF-8 without NUL so it can travel as an argument.
pub const MIXED_TEXT: &str = "Hi, Zoë! 42 km/h — naïve 東京?\n\tok.";
