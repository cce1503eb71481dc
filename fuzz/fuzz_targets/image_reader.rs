//! Fuzz target `image_reader`: see `inkling_tests::fuzz_bodies::image_reader`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| inkling_fuzz::fuzz_bodies::image_reader(data));
