//! Fuzz target `engine_run`: see `inkling_tests::fuzz_bodies::engine_run`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| inkling_fuzz::fuzz_bodies::engine_run(data));
