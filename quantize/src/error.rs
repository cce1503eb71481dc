//! Errors of checkpoint reading and conversion; each names the file or tensor at fault.

use std::path::PathBuf;

use crate::schema::SCHEMA_SPEC;

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
    #[error("{path}: tensor {name} is missing{hint} (see the {SCHEMA_SPEC})")]
    Missing {
        /// The file.
        path: PathBuf,
        /// The tensor, quoted (and the mapped name with its map line, if a map was given).
        name: String,
        /// What the file was read as, when that helps (e.g. the layout recognised).
        hint: String,
    },
    /// A tensor is not part of the schema (after the name map or layout).
    #[error(
        "{path}: tensor `{name}` is not part of the model's schema (map it, or remove it; \
         see the {SCHEMA_SPEC})"
    )]
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
    #[error(
        "{path}: tensor `{name}` has shape {found:?}, expected {expected:?}{hint} (see the {SCHEMA_SPEC})"
    )]
    Shape {
        /// The file.
        path: PathBuf,
        /// The tensor.
        name: String,
        /// The shape the schema and the other tensors imply.
        expected: Vec<usize>,
        /// The shape in the file.
        found: Vec<usize>,
        /// What the shape suggests, when something does.
        hint: &'static str,
    },
    /// The embedding has more rows than there are byte values.
    #[error(
        "{path}: tensor `{name}` has {rows} rows; the model reads bytes, so it takes 256, one per \
         byte value. If row b is byte value b, `inkling convert --cut-rows` keeps rows 0..256 and drops the \
         {cut} past them (see the {SCHEMA_SPEC})",
        cut = rows - 256
    )]
    TooManyRows {
        /// The file.
        path: PathBuf,
        /// The tensor's name in the file.
        name: String,
        /// Its rows.
        rows: usize,
    },
    /// A bias the equations have no place for holds values other than zero.
    #[error(
        "{path}: tensor `{name}` is a bias our equations have no place for, and it is not zero \
         (element {index} is {value}): the model would change without it (see the {SCHEMA_SPEC})"
    )]
    NonZeroBias {
        /// The file.
        path: PathBuf,
        /// The tensor's name in the file.
        name: String,
        /// Flat index of the first value other than zero.
        index: usize,
        /// That value.
        value: f32,
    },
    /// A norm with a bias: the model was trained with layer norm, not RMS norm.
    #[error(
        "{path}: tensor `{name}` is a norm's bias: the checkpoint was trained with layer norm, \
         which subtracts the mean; our equations use RMS norm (see the {SCHEMA_SPEC})"
    )]
    LayerNorm {
        /// The file.
        path: PathBuf,
        /// The tensor's name in the file.
        name: String,
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
    #[error(
        "{path}: metadata `{key}` = {value:?} is not a positive number (see the {SCHEMA_SPEC})"
    )]
    Metadata {
        /// The file.
        path: PathBuf,
        /// The key.
        key: String,
        /// The value.
        value: String,
    },
    /// The name-mapping file is malformed.
    #[error(
        "{path}{}: name map: {reason} (see the {SCHEMA_SPEC})",
        line.map(|l| format!(" line {l}")).unwrap_or_default()
    )]
    NameMap {
        /// The map file.
        path: PathBuf,
        /// The line at fault, when one is.
        line: Option<usize>,
        /// What is wrong.
        reason: String,
    },
    /// The image writer refused the tensors.
    #[error("writing the image: {0}")]
    Image(inkling_core::Error),
}
