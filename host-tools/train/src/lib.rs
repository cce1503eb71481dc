//! The inkling trainer: a CPU trainer for the byte-level selective state-space model
//! of the design, with a hand-written backward pass. It takes the core's dimensions,
//! writes checkpoints under the converter's tensor names, and prints nothing: a run
//! reports its progress through [`Progress`].

pub mod adamw;
pub mod batches;
pub mod checkpoint_file;
pub mod error;
pub mod forward_backward;
#[cfg(test)]
mod gradient_check;
pub mod loss_curve;
pub mod matrix_product;
pub mod model_params;
pub mod progress;
pub mod real;
pub mod selective_scan;
pub mod shapes;
pub mod training_run;
#[cfg(test)]
mod training_tests;

pub use error::TrainError;
pub use progress::{Memorising, Progress, StepReport};
pub use training_run::{train, TrainOptions, TrainSummary};
