//! One module per `inkling` command: its arguments and what it does.

pub mod bench;
pub mod budget;
pub mod checks;
pub mod convert;
pub mod demo;
pub mod eval;
pub mod inspect;
pub mod keys;
pub mod next;
pub mod suggest;
pub mod train;
pub mod try_screen;

/// RAM of a typing session with `beams` suggestions and the default text history, in bytes.
pub fn session_ram(dims: &inkling_core::Dims, beams: usize) -> usize {
    dims.session_bytes(beams, inkling_core::session::DEFAULT_HISTORY)
}
