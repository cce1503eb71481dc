//! What can go wrong while training, each naming the file or option at fault.

use std::path::PathBuf;

#[derive(Debug, thiserror::Error)]
pub enum TrainError {
    #[error("option {option}: {reason}")]
    InvalidOption {
        option: &'static str,
        reason: String,
    },
    #[error("cannot read corpus {path}: {source}")]
    ReadCorpus {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error(
        "no corpus file has {needed} training bytes (sequence length + 1) after the held-out part"
    )]
    CorpusTooShort { needed: usize },
    #[error("cannot read {path}: {source}")]
    ReadFile {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error("cannot write {path}: {source}")]
    WriteFile {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error("{path}: not a valid safetensors file: {source}")]
    ParseCheckpoint {
        path: PathBuf,
        source: safetensors::SafeTensorError,
    },
    #[error("{path}: cannot encode tensors: {source}")]
    EncodeCheckpoint {
        path: PathBuf,
        source: safetensors::SafeTensorError,
    },
    #[error("{path}: tensor {name} is missing")]
    MissingTensor { path: PathBuf, name: String },
    #[error("{path}: tensor {name} has shape {found:?}, expected {expected:?}")]
    TensorShape {
        path: PathBuf,
        name: String,
        expected: Vec<usize>,
        found: Vec<usize>,
    },
    #[error("{path}: tensor {name} is {found:?}, expected F32")]
    TensorDtype {
        path: PathBuf,
        name: String,
        found: safetensors::Dtype,
    },
    #[error("{path}: metadata {key}: {reason}")]
    Metadata {
        path: PathBuf,
        key: &'static str,
        reason: String,
    },
    #[error("cannot install the Ctrl-C handler: {0}")]
    CtrlC(String),
    #[error("cannot start the worker threads: {0}")]
    ThreadPool(#[from] rayon::ThreadPoolBuildError),
}
