//! `inkling train`: a CPU trainer for the byte-level selective state-space model
//! of the design, with a hand-written backward pass.

pub mod adamw;
pub mod batches;
pub mod checkpoint_file;
pub mod config;
pub mod error;
pub mod forward_backward;
#[cfg(test)]
mod gradient_check;
pub mod loss_curve;
pub mod matrix_product;
pub mod model_params;
pub mod real;
pub mod selective_scan;
pub mod training_run;
#[cfg(test)]
mod training_tests;

pub use config::Preset;
pub use error::TrainError;
pub use training_run::{train, TrainOptions, TrainSummary};
