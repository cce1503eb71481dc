//! The workstation side of inkling: the `inkling` command's pieces.

pub mod commands;
pub mod compressors;
pub mod cost_model;
pub mod error;
pub mod file_kind;
pub mod keystroke_savings;
pub mod memory_file;
pub mod model_file;
pub mod text_scoring;
