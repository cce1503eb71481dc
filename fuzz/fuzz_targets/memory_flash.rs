//! Fuzz target `memory_flash`: see `inkling_tests::fuzz_bodies::memory_flash`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| inkling_fuzz::fuzz_bodies::memory_flash(data));
