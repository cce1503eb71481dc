//! The last `H` bytes typed, from which a backspace across a word boundary recovers.

use heapless::Deque;

/// The default history length of a [`Session`](super::Session), in bytes.
///
/// ```
/// assert_eq!(inkling_core::session::DEFAULT_HISTORY, 128);
/// ```
pub const DEFAULT_HISTORY: usize = 128;

/// A fixed-capacity buffer of the last `H` bytes typed: when full, a new byte pushes the
/// oldest one out (that text is forgotten).
///
/// ```
/// use inkling_core::session::TextHistory;
/// let mut history = TextHistory::<4>::new();
/// for &b in b"abcdef" {
///     history.push(b);
/// }
/// assert!(history.iter().eq(b"cdef".iter().copied()));
/// assert_eq!(history.pop(), Some(b'f'));
/// assert_eq!(history.len(), 3);
/// ```
#[derive(Debug, Clone, Default)]
pub struct TextHistory<const H: usize> {
    bytes: Deque<u8, H>,
}

impl<const H: usize> TextHistory<H> {
    /// An empty history.
    ///
    /// ```
    /// assert!(inkling_core::session::TextHistory::<8>::new().is_empty());
    /// ```
    pub const fn new() -> Self {
        TextHistory {
            bytes: Deque::new(),
        }
    }

    /// Appends a byte, forgetting the oldest one when full.
    ///
    /// ```
    /// let mut h = inkling_core::session::TextHistory::<2>::new();
    /// h.push(b'a');
    /// assert_eq!(h.len(), 1);
    /// ```
    pub fn push(&mut self, byte: u8) {
        if self.bytes.is_full() {
            self.bytes.pop_front();
        }
        // Cannot fail after the pop above (for H > 0; with H = 0 nothing is kept).
        let _ = self.bytes.push_back(byte);
    }

    /// Removes and returns the newest byte.
    ///
    /// ```
    /// let mut h = inkling_core::session::TextHistory::<2>::new();
    /// assert_eq!(h.pop(), None);
    /// ```
    pub fn pop(&mut self) -> Option<u8> {
        self.bytes.pop_back()
    }

    /// Forgets everything.
    ///
    /// ```
    /// let mut h = inkling_core::session::TextHistory::<2>::new();
    /// h.push(b'a');
    /// h.clear();
    /// assert!(h.is_empty());
    /// ```
    pub fn clear(&mut self) {
        self.bytes.clear();
    }

    /// Bytes held (at most `H`).
    ///
    /// ```
    /// let mut h = inkling_core::session::TextHistory::<2>::new();
    /// for &b in b"abc" { h.push(b); }
    /// assert_eq!(h.len(), 2);
    /// ```
    pub fn len(&self) -> usize {
        self.bytes.len()
    }

    /// Whether nothing is held.
    ///
    /// ```
    /// assert!(inkling_core::session::TextHistory::<2>::new().is_empty());
    /// ```
    pub fn is_empty(&self) -> bool {
        self.bytes.is_empty()
    }

    /// The bytes held, oldest first.
    ///
    /// ```
    /// let mut h = inkling_core::session::TextHistory::<3>::new();
    /// for &b in b"xy" { h.push(b); }
    /// assert!(h.iter().eq(*b"xy"));
    /// ```
    pub fn iter(&self) -> impl Iterator<Item = u8> + '_ {
        self.bytes.iter().copied()
    }
}
