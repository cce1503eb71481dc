//! Fuzz target `checkpoint_loader`: see `inkling_tests::fuzz_bodies::checkpoint_loader`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| inkling_fuzz::fuzz_bodies::checkpoint_loader(data));
