//! What kind of file a path holds, told from its first bytes, so that a command given the
//! wrong kind says what it got and what to do instead of failing deep in a parser.

use std::io::Read;
use std::path::Path;

use crate::error::HostError;

/// Bytes read to tell a file's kind.
const SNIFF_BYTES: u64 = 4096;

/// The kinds of file the commands tell apart.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileKind {
    /// A packed image: starts with the image magic `INKL`.
    Image,
    /// A safetensors checkpoint: an 8-byte little-endian header length that fits the file,
    /// then a JSON object.
    Checkpoint,
    /// No bytes at all.
    Empty,
    /// UTF-8 text without NUL bytes.
    Text,
    /// Anything else.
    Other,
}

impl FileKind {
    /// The kind of a file whose first bytes are `head` and whose length is `len`.
    pub fn of(head: &[u8], len: u64) -> FileKind {
        if head.is_empty() {
            return FileKind::Empty;
        }
        if head.starts_with(&inkling_core::image::format::MAGIC) {
            return FileKind::Image;
        }
        let header_len = head
            .get(..8)
            .and_then(|b| b.try_into().ok())
            .map(u64::from_le_bytes);
        if header_len.is_some_and(|n| n.checked_add(8).is_some_and(|end| end <= len))
            && head.get(8) == Some(&b'{')
        {
            return FileKind::Checkpoint;
        }
        let text = match std::str::from_utf8(head) {
            Ok(_) => true,
            // Cut inside a character at the end of the bytes read: still text.
            Err(e) => e.error_len().is_none(),
        };
        if text && !head.contains(&0) {
            FileKind::Text
        } else {
            FileKind::Other
        }
    }

    /// What the kind is, in a message.
    pub fn description(self) -> &'static str {
        match self {
            FileKind::Image => "a packed image (.inkl)",
            FileKind::Checkpoint => "a float checkpoint (safetensors)",
            FileKind::Empty => "an empty file",
            FileKind::Text => "a text file",
            FileKind::Other => "neither an image nor a safetensors checkpoint",
        }
    }
}

/// What a command accepts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Wanted {
    /// A packed image only.
    Image,
    /// A float checkpoint only.
    Checkpoint,
    /// Either.
    Model,
}

/// Reads the first bytes of `path` and refuses a file of the wrong kind with a message
/// that says what it is and what to run instead.
pub fn check(path: &Path, wanted: Wanted) -> Result<FileKind, HostError> {
    let file = std::fs::File::open(path).map_err(HostError::io(path))?;
    let len = file.metadata().map_err(HostError::io(path))?.len();
    let mut head = Vec::new();
    file.take(SNIFF_BYTES)
        .read_to_end(&mut head)
        .map_err(HostError::io(path))?;
    let kind = FileKind::of(&head, len);
    let shown = path.display();
    let problem = match (wanted, kind) {
        (Wanted::Image, FileKind::Image)
        | (Wanted::Checkpoint, FileKind::Checkpoint)
        | (Wanted::Model, FileKind::Image | FileKind::Checkpoint) => return Ok(kind),
        (Wanted::Image, FileKind::Checkpoint) => format!(
            "this is a float checkpoint (safetensors), not an image: convert it first with \
             `inkling convert {shown} -o IMAGE.inkl`"
        ),
        (Wanted::Checkpoint, FileKind::Image) => "this is already a packed image (.inkl), not \
             a checkpoint: `convert` reads a float checkpoint (.safetensors); `inkling inspect` \
             shows what an image holds"
            .to_string(),
        (Wanted::Image, other) => format!("{}, not a packed image (.inkl)", other.description()),
        (Wanted::Checkpoint, other) => format!(
            "{}, not a float checkpoint (.safetensors)",
            other.description()
        ),
        (Wanted::Model, other) => format!(
            "{}, not a model: give a packed image (.inkl) or a float checkpoint (.safetensors)",
            other.description()
        ),
    };
    Err(HostError::WrongFile {
        path: path.to_path_buf(),
        problem,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kinds_from_first_bytes() {
        // The safetensors layout: u64 little-endian header length, then a JSON object.
        let mut checkpoint = 2u64.to_le_bytes().to_vec();
        checkpoint.extend_from_slice(b"{}");
        assert_eq!(FileKind::of(&checkpoint, 10), FileKind::Checkpoint);
        assert_eq!(FileKind::of(&checkpoint, 9), FileKind::Other); // header past the end
        assert_eq!(FileKind::of(b"INKL\x01\x00", 6), FileKind::Image);
        assert_eq!(FileKind::of(b"", 0), FileKind::Empty);
        assert_eq!(FileKind::of(b"# inkling\nPredictive", 20), FileKind::Text);
        assert_eq!(FileKind::of(b"\x89PNG\r\n\x1a\n\0\0", 10), FileKind::Other);
    }
}
