//! The text of the word being typed, in a fixed buffer.

use crate::error::Error;

/// The longest word a session holds, in bytes (UTF-8 bytes, not characters).
///
/// When the current word has this many bytes, [`Session::push`](super::Session::push) of
/// another word byte is refused with [`Error::CapacityExceeded`] and changes nothing; a
/// boundary byte is still accepted and starts a new word. Completions are never longer.
///
/// ```
/// assert_eq!(inkling_core::session::MAX_WORD_LEN, 32);
/// ```
pub const MAX_WORD_LEN: usize = 32;

/// The bytes of one word, at most [`MAX_WORD_LEN`].
///
/// ```
/// use inkling_core::session::Word;
/// let word = Word::from_slice(b"hello").unwrap();
/// assert_eq!(word.as_slice(), b"hello");
/// ```
pub type Word = heapless::Vec<u8, MAX_WORD_LEN>;

/// The word being typed: the bytes since the last word boundary.
///
/// ```
/// use inkling_core::session::{WordBuffer, MAX_WORD_LEN};
/// let mut word = WordBuffer::new();
/// for _ in 0..MAX_WORD_LEN {
///     word.push(b'a')?;
/// }
/// assert!(word.push(b'a').is_err()); // full: refused, nothing changes
/// assert_eq!(word.as_bytes().len(), MAX_WORD_LEN);
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct WordBuffer {
    bytes: Word,
}

impl WordBuffer {
    /// An empty word.
    ///
    /// ```
    /// assert!(inkling_core::session::WordBuffer::new().as_bytes().is_empty());
    /// ```
    pub const fn new() -> Self {
        WordBuffer { bytes: Word::new() }
    }

    /// Appends a byte; a full word refuses it with [`Error::CapacityExceeded`].
    ///
    /// ```
    /// let mut w = inkling_core::session::WordBuffer::new();
    /// w.push(b'o')?;
    /// assert_eq!(w.as_bytes(), b"o");
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn push(&mut self, byte: u8) -> Result<(), Error> {
        self.bytes.push(byte).map_err(|_| Error::CapacityExceeded {
            buffer: "word",
            capacity: MAX_WORD_LEN,
        })
    }

    /// Removes and returns the last byte.
    ///
    /// ```
    /// let mut w = inkling_core::session::WordBuffer::new();
    /// assert_eq!(w.pop(), None);
    /// ```
    pub fn pop(&mut self) -> Option<u8> {
        self.bytes.pop()
    }

    /// Empties the word.
    ///
    /// ```
    /// let mut w = inkling_core::session::WordBuffer::new();
    /// w.push(b'o')?;
    /// w.clear();
    /// assert!(w.as_bytes().is_empty());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn clear(&mut self) {
        self.bytes.clear();
    }

    /// Whether the word has [`MAX_WORD_LEN`] bytes.
    ///
    /// ```
    /// assert!(!inkling_core::session::WordBuffer::new().is_full());
    /// ```
    pub fn is_full(&self) -> bool {
        self.bytes.is_full()
    }

    /// The bytes of the word.
    ///
    /// ```
    /// let mut w = inkling_core::session::WordBuffer::new();
    /// w.push(b'a')?;
    /// assert_eq!(w.as_bytes(), b"a");
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn as_bytes(&self) -> &[u8] {
        self.bytes.as_slice()
    }
}
