//! `inkling-quantize`: float safetensors checkpoints to packed int8 images.
//!
//! - [`checkpoint`] reads a checkpoint (F32, F16 or BF16) in the schema of the design, with
//!   an optional [`name_map`] for trainers that name tensors otherwise, and checks it.
//! - [`float_model`] runs a checkpoint in f32 through the very recurrence the device runs.
//! - [`quantiser`] and [`convert`] make the image and report what the conversion cost.
//! - [`atomic_file`] writes outputs so that an existing file is never left half-written.

pub mod atomic_file;
pub mod checkpoint;
pub mod convert;
pub mod error;
pub mod float_model;
pub mod header_lengths;
pub mod name_map;
pub mod quantiser;

pub use checkpoint::Checkpoint;
pub use convert::{convert, ConversionReport, ConvertOptions, TensorReport};
pub use error::QuantizeError;
pub use float_model::FloatModel;
