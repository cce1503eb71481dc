//! The fuzz targets' bodies. The files are the ones `inkling-tests` compiles as
//! `inkling_tests::fuzz_bodies` (its regression test replays saved inputs through it); it is
//! included here by path so that a fuzz build compiles only the core and the quantiser, not
//! the workstation tools that `inkling-tests` also depends on.

#[path = "../../tests/src/fuzz_bodies.rs"]
pub mod fuzz_bodies;
