//! The engine: one byte in, 256 next-byte logits out, in a fixed-size state.
//!
//! [`recurrence::step`] is the model of the crate's design (pre-norm residual selective
//! state-space blocks on bytes) written once, generic over where the weights come from
//! ([`weights::Weights`]): the int8 [`Model`](crate::Model) here, or float weights on the
//! workstation. [`Engine`](engine::Engine) bundles a model with its buffers.

pub mod activation;
pub mod buffers;
#[allow(clippy::module_inception)]
pub mod engine;
pub mod kernels;
pub mod matvec;
pub mod nonlinear;
pub mod recurrence;
pub mod state_store;
pub mod weights;
