//! The errors of the `inkling` command; each names the file at fault.

use std::path::PathBuf;

/// What can make an `inkling` command fail.
#[derive(Debug, thiserror::Error)]
pub enum HostError {
    /// A file could not be read or written.
    #[error("{path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The cause.
        source: std::io::Error,
    },
    /// An image failed validation.
    #[error("{path}: {source}")]
    Image {
        /// The file.
        path: PathBuf,
        /// What the reader found.
        source: inkling_core::Error,
    },
    /// A file is not of the kind the command reads.
    #[error("{path}: {problem}")]
    WrongFile {
        /// The file.
        path: PathBuf,
        /// What it is and what to do.
        problem: String,
    },
    /// A checkpoint could not be read or converted.
    #[error(transparent)]
    Checkpoint(#[from] inkling_quantize::QuantizeError),
    /// Training failed.
    #[error(transparent)]
    Train(#[from] inkling_train::TrainError),
    /// The arguments do not make sense together.
    #[error("{0}")]
    Usage(String),
}

impl HostError {
    /// An I/O error on `path`.
    pub fn io(path: impl Into<PathBuf>) -> impl FnOnce(std::io::Error) -> HostError {
        let path = path.into();
        move |source| HostError::Io { path, source }
    }
}
