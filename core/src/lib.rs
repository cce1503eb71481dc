//! `inkling-core`: predictive text for small devices, in a fixed amount of RAM.
//!
//! This crate is `#![no_std]` and never allocates. It reads a packed int8 model image
//! ([`image`]), runs a byte-level selective state-space recurrence on it ([`engine`]) and,
//! on top, keeps a typing session that offers completions ([`session`]), which may learn
//! its user's words ([`user_memory`]).
//!
//! The caller owns every byte: [`Model`] borrows the image (it can stay in flash), and the
//! engine state and scratch live in buffers the caller provides, sized by [`Dims`].
//!
//! ```
//! use inkling_core::{Model, Engine, EngineBuffers};
//! # let image = inkling_core::image::example::tiny_image();
//! let model = Model::from_bytes(&image)?;
//! let mut buffers = EngineBuffers::<4096, 4096, 1024>::new();
//! let mut engine = Engine::new(model, &mut buffers)?;
//! for &b in b"the " {
//!     engine.step(b);
//! }
//! let most_likely = engine.most_likely_byte();
//! # let _ = most_likely;
//! # Ok::<(), inkling_core::Error>(())
//! ```
//!
//! **Unsafe code** is denied crate-wide and allowed, item by item, in four places only: the
//! inline-assembly kernels of the matrix products (`engine::kernels::cortex_m4`,
//! `engine::kernels::x86_sse2`), the half-precision state conversion on Arm cores with an
//! FPU (`engine::state_store`), and the one hand-out of a `static`'s buffers
//! ([`session::StaticSessionBuffers::take`]).
#![no_std]
#![deny(missing_docs)]
#![deny(unsafe_code)]
#![cfg_attr(
    not(test),
    deny(
        clippy::panic,
        clippy::unwrap_used,
        clippy::expect_used,
        clippy::indexing_slicing
    )
)]

pub mod engine;
pub mod error;
pub mod image;
pub mod session;
pub mod user_memory;

pub use engine::buffers::{EngineBuffers, Scratch};
pub use engine::engine::Engine;
pub use error::Error;
pub use image::dims::Dims;
pub use image::model::Model;
pub use session::{KeyMap, SearchOptions, Session, Suggestion, Suggestions};
