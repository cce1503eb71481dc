//! Errors of checkpoint reading and conversion; each names the file or tensor at fault.

use std::path::PathBuf;

/// What can go wrong reading a checkpoint or converting it.
#[derive(Debug, thiserror::Error)]
pub enum QuantizeError {
    /// The file could not be read or written.
    #[error("{path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// The safetensors container is malformed.
    #[error("{path}: not a readable safetensors file: {reason}")]
    Container {
        /// The file.
        path: PathBuf,
        /// The parser's reason.
        reason: String,
    },
    /// A tensor's data offsets in the header give another length than its shape and type.
    #[error(
        "{path}: tensor `{name}`: the header's shape and type need {needed} bytes, its data \
         offsets give {given}"
    )]
    TensorLength {
        /// The file.
        path: PathBuf,
        /// The tensor's name in the file.
        name: String,
        /// Bytes the shape and type need.
        needed: u64,
        /// Bytes between the data offsets.
        given: u64,
    },
    /// A tensor the schema needs is absent.
    #[error("{path}: tensor `{name}` is missing")]
    Missing {
        /// The file.
        path: PathBuf,
        /// The schema name (and the mapped name, if a map was given).
        name: String,
    },
    /// A tensor is not part of the schema (after the name map).
    #[error("{path}: tensor `{name}` is not part of the model's schema (map it, or remove it)")]
    Unexpected {
        /// The file.
        path: PathBuf,
        /// The tensor's name in the file.
        name: String,
    },
    /// A tensor has a storage type other than F32, F16 or BF16.
    #[error("{path}: tensor `{name}` has type {dtype}; only F32, F16 and BF16 are read")]
    Dtype {
        /// The file.
        path: PathBuf,
        /// The tensor.
        name: String,
        /// Its type.
        dtype: String,
    },
    /// A tensor's shape disagrees with the others.
    #[error("{path}: tensor `{name}` has shape {found:?}, expected {expected:?}")]
    Shape {
        /// The file.
        path: PathBuf,
        /// The tensor.
        name: String,
        /// The shape the schema and the other tensors imply.
        expected: Vec<usize>,
        /// The shape in the file.
        found: Vec<usize>,
    },
    /// A tensor holds NaN or infinity.
    #[error("{path}: tensor `{name}` has a non-finite value at element {index}")]
    NotFinite {
        /// The file.
        path: PathBuf,
        /// The tensor.
        name: String,
        /// Flat index of the first bad element.
        index: usize,
    },
    /// The model's dimensions are outside what an image can hold.
    #[error("{path}: {what} = {value} is outside the image limit {limit}")]
    Limit {
        /// The file.
        path: PathBuf,
        /// Which dimension.
        what: &'static str,
        /// Its value.
        value: usize,
        /// The limit.
        limit: usize,
    },
    /// A metadata value could not be read.
    #[error("{path}: metadata `{key}` = {value:?} is not a positive number")]
    Metadata {
        /// The file.
        path: PathBuf,
        /// The key.
        key: String,
        /// The value.
        value: String,
    },
    /// The name-mapping file is malformed.
    #[error("{path}: name map: {reason}")]
    NameMap {
        /// The map file.
        path: PathBuf,
        /// What is wrong.
        reason: String,
    },
    /// The image writer refused the tensors.
    #[error("writing the image: {0}")]
    Image(inkling_core::Error),
}
