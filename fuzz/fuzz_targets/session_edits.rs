//! Fuzz target `session_edits`: see `inkling_tests::fuzz_bodies::session_edits`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| inkling_fuzz::fuzz_bodies::session_edits(data));
