//! The packed model image (`.inkl`): its byte-level format, the reader and the writer.
//!
//! The format is specified byte by byte in [`format`]. [`Model::from_bytes`](crate::Model::from_bytes)
//! validates an image once; after that the engine reads weights straight from the borrowed
//! bytes (which may be in flash) without further checks. [`writer`] lays an image out in a
//! caller-provided buffer, and is what the workstation converter uses, so reader and writer
//! share one definition of the layout.

pub mod checksum;
pub mod dims;
pub mod example;
pub mod format;
pub mod model;
pub mod views;
pub mod writer;
