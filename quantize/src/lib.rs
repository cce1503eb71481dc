//! `inkling-quantize`: float safetensors checkpoints to packed int8 images.
//!
//! - [`schema`] specifies the checkpoints read (names, shapes, dtypes, metadata, equations,
//!   outside layouts); [`checkpoint`] reads one (F32, F16 or BF16) and checks it, in the
//!   schema's names, through a [`name_map`], or in an [`outside_layout`] it recognises.
//! - [`float_model`] runs a checkpoint in f32 through the very recurrence the device runs.
//! - [`quantiser`] and [`convert`] make the image and report what the conversion cost.
//! - [`export`] writes a checkpoint in an outside layout, from the reader's own table.
//! - [`atomic_file`] writes outputs so that an existing file is never left half-written.

pub mod atomic_file;
pub mod checkpoint;
pub mod convert;
pub mod error;
pub mod export;
pub mod float_model;
pub mod header_lengths;
pub mod name_map;
pub mod outside_layout;
pub mod quantiser;
pub mod schema;

pub use checkpoint::{Adjustment, Checkpoint, ReadOptions};
pub use convert::{convert, ConversionReport, ConvertOptions, TensorReport};
pub use error::QuantizeError;
pub use float_model::FloatModel;
