//! The errors of `inkling-core`. Each names the place at fault.

use core::fmt;

/// Everything that can go wrong in `inkling-core`.
///
/// ```
/// use inkling_core::{Error, Model};
/// let err = Model::from_bytes(b"not an image").unwrap_err();
/// assert!(matches!(err, Error::Truncated { .. }));
/// assert!(err.to_string().contains("image"));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Error {
    /// The image is shorter than its header or its header says it is.
    Truncated {
        /// Bytes the image needs.
        needed: usize,
        /// Bytes given.
        actual: usize,
    },
    /// The first four bytes are not `INKL`.
    BadMagic,
    /// The image's major version is not one this reader understands.
    UnsupportedVersion {
        /// Major version in the image.
        major: u16,
        /// Minor version in the image.
        minor: u16,
    },
    /// The image length field disagrees with the bytes given.
    LengthMismatch {
        /// Length written in the header.
        header: usize,
        /// Bytes given.
        actual: usize,
    },
    /// The CRC-32 at the end of the image does not match its contents.
    BadChecksum {
        /// Checksum stored in the image.
        stored: u32,
        /// Checksum computed over the image.
        computed: u32,
    },
    /// A header field is out of its documented range.
    BadHeader {
        /// The field's name.
        field: &'static str,
        /// Byte offset of the field in the image.
        offset: usize,
    },
    /// A tensor table entry is wrong.
    BadTensor {
        /// Index of the entry in the tensor table.
        index: usize,
        /// What is wrong with it.
        problem: TensorProblem,
        /// Byte offset of the entry in the image.
        offset: usize,
    },
    /// A caller-provided buffer is smaller than the model needs.
    BufferTooSmall {
        /// Which buffer.
        buffer: &'static str,
        /// Elements needed.
        needed: usize,
        /// Elements given.
        actual: usize,
    },
    /// A text or word is longer than the fixed capacity that holds it.
    CapacityExceeded {
        /// Which buffer.
        buffer: &'static str,
        /// Its capacity.
        capacity: usize,
    },
    /// A word list (deny list or lexicon) has an empty line or a line not after the one
    /// before it (lines must be non-empty and strictly ascending in
    /// [`word_order`](crate::session::word_list::word_order), bytewise with case folded).
    BadWordList {
        /// The line at fault, counted from 1.
        line: usize,
        /// Byte offset of its start in the list.
        offset: usize,
    },
    /// A key given for 12-key entry is not a key of the layout, or carries no letters.
    NotALetterKey {
        /// Its position in the keys given, counted from 0.
        position: usize,
        /// The byte given.
        byte: u8,
    },
    /// Buffers that are handed out once (a
    /// [`StaticSessionBuffers`](crate::session::StaticSessionBuffers)) were taken before.
    InUse {
        /// Which buffers.
        buffer: &'static str,
    },
    /// The user memory's flash store failed (see
    /// [`FlashStore`](crate::user_memory::FlashStore)).
    MemoryFlash {
        /// What went wrong.
        problem: FlashProblem,
    },
}

/// What went wrong in the user memory's flash store (see [`Error::MemoryFlash`]).
///
/// ```
/// use inkling_core::{Error, error::FlashProblem};
/// let err = Error::MemoryFlash { problem: FlashProblem::Full };
/// assert!(err.to_string().contains("user memory flash"));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum FlashProblem {
    /// The flash range does not start and end on page boundaries, holds fewer than two
    /// pages, or its pages or words do not suit the store.
    BadRange,
    /// The flash driver reported an error (a read, write or erase failed).
    Driver,
    /// The range holds no room for another record, even after reclaiming old pages.
    Full,
    /// The store found damaged contents it could not repair; erase the range to start anew.
    Corrupted,
    /// A record could not be encoded or decoded.
    Record,
    /// An operation did not complete (see the store's docs: it cannot happen with a
    /// blocking flash).
    Unfinished,
}

impl fmt::Display for FlashProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            FlashProblem::BadRange => {
                "range not on page boundaries, under two pages, or pages or words unsuited"
            }
            FlashProblem::Driver => "the flash driver failed a read, write or erase",
            FlashProblem::Full => "no room for another record",
            FlashProblem::Corrupted => "damaged contents that could not be repaired",
            FlashProblem::Record => "a record could not be encoded or decoded",
            FlashProblem::Unfinished => "an operation did not complete",
        })
    }
}

/// What is wrong with a tensor table entry (see [`Error::BadTensor`]).
///
/// ```
/// use inkling_core::{Error, Model, error::TensorProblem, image::checksum::crc32};
/// let mut image = inkling_core::image::example::tiny_image();
/// image[64 + 16] += 1; // entry 0's payload offset, no longer a multiple of 16
/// let n = image.len() - 4; // re-seal the CRC, so the reader gets past it
/// let crc = crc32(&image[..n]).to_le_bytes();
/// image[n..].copy_from_slice(&crc);
/// let err = Model::from_bytes(&image).unwrap_err();
/// assert_eq!(err, Error::BadTensor { index: 0, problem: TensorProblem::Misaligned, offset: 64 });
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum TensorProblem {
    /// The role or block is not the one the canonical order puts here.
    UnexpectedRole,
    /// The element or scale type is not allowed for this role.
    BadType,
    /// Rows or columns disagree with the model dimensions.
    BadShape,
    /// The payload is not 16-byte aligned.
    Misaligned,
    /// The payload lies outside the image or overlaps the header.
    OutOfBounds,
    /// A float value (weight or scale) is NaN or infinite.
    NotFinite,
    /// A reserved field is not zero.
    Reserved,
}

impl fmt::Display for TensorProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            TensorProblem::UnexpectedRole => "role or block out of canonical order",
            TensorProblem::BadType => "element or scale type not allowed for this role",
            TensorProblem::BadShape => "shape disagrees with the model dimensions",
            TensorProblem::Misaligned => "payload not 16-byte aligned",
            TensorProblem::OutOfBounds => "payload outside the image",
            TensorProblem::NotFinite => "value is NaN or infinite",
            TensorProblem::Reserved => "reserved field not zero",
        })
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Truncated { needed, actual } => {
                write!(f, "image truncated: needs {needed} bytes, has {actual}")
            }
            Error::BadMagic => f.write_str("image magic at byte 0 is not \"INKL\""),
            Error::UnsupportedVersion { major, minor } => write!(
                f,
                "image version {major}.{minor} at byte 4 is not supported (this reader reads major {})",
                crate::image::format::MAJOR_VERSION
            ),
            Error::LengthMismatch { header, actual } => write!(
                f,
                "image length at byte 8 says {header} bytes, but {actual} were given"
            ),
            Error::BadChecksum { stored, computed } => write!(
                f,
                "image CRC-32 at the end is {stored:#010x}, contents give {computed:#010x}"
            ),
            Error::BadHeader { field, offset } => {
                write!(f, "image header field `{field}` at byte {offset} is out of range")
            }
            Error::BadTensor {
                index,
                problem,
                offset,
            } => write!(
                f,
                "image tensor table entry {index} at byte {offset}: {problem}"
            ),
            Error::BufferTooSmall {
                buffer,
                needed,
                actual,
            } => write!(
                f,
                "buffer `{buffer}` holds {actual} elements, the model needs {needed}"
            ),
            Error::CapacityExceeded { buffer, capacity } => {
                write!(f, "`{buffer}` is full (capacity {capacity})")
            }
            Error::BadWordList { line, offset } => write!(
                f,
                "word list line {line} at byte {offset} is empty or not after the line before it \
                 (lines must be non-empty and sorted strictly ascending by bytes, case folded, \
                 each word once in any case)"
            ),
            Error::NotALetterKey { position, byte } => {
                // The position counts from 1 here: "key 0" would read as the digit 0.
                let number = position + 1;
                if byte.is_ascii_graphic() {
                    let key = *byte as char;
                    write!(f, "key `{key}` ({byte:#04x}), number {number} of the keys pressed,")?;
                } else {
                    write!(f, "byte {byte:#04x}, number {number} of the keys pressed,")?;
                }
                f.write_str(" is not a letter key of the keypad layout")
            }
            Error::MemoryFlash { problem } => write!(f, "user memory flash store: {problem}"),
            Error::InUse { buffer } => {
                write!(f, "`{buffer}` were taken before: they are handed out once")
            }
        }
    }
}

impl core::error::Error for Error {}
