//! [`UserMemory`]: the words one device's user has typed, with counts and recency, in a
//! fixed capacity.

use crate::session::word_boundary::is_boundary;
use crate::session::word_list::WordList;
use crate::session::MAX_WORD_LEN;

/// The shortest word the memory keeps, in bytes: a one-byte word saves no keystroke when
/// offered (taking it costs the key that typing it costs).
///
/// ```
/// assert_eq!(inkling_core::user_memory::MIN_LEARNED_LEN, 2);
/// ```
pub const MIN_LEARNED_LEN: usize = 2;

/// One word of the memory: its bytes as the user typed them (case kept), how often it was
/// typed and when last.
///
/// ```
/// use inkling_core::user_memory::UserMemory;
/// use inkling_core::session::WordList;
/// let mut memory = UserMemory::<8>::new();
/// memory.learn(b"Tamsel", &WordList::EMPTY);
/// let word = &memory.words()[0];
/// assert_eq!((word.text(), word.count(), word.last_used()), (&b"Tamsel"[..], 1, 0));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LearnedWord {
    bytes: [u8; MAX_WORD_LEN],
    len: u8,
    count: u16,
    last_used: u32,
    /// Whether the flash store holds this word as it is now.
    pub(crate) saved: bool,
}

impl LearnedWord {
    /// A word of `text` (whose length the caller checked), counted `count` times, last at
    /// `last_used`, not yet saved.
    pub(crate) fn new(text: &[u8], count: u16, last_used: u32) -> Self {
        let mut bytes = [0u8; MAX_WORD_LEN];
        let len = text.len().min(MAX_WORD_LEN);
        for (b, &t) in bytes.iter_mut().zip(text) {
            *b = t;
        }
        LearnedWord {
            bytes,
            len: len as u8,
            count,
            last_used,
            saved: false,
        }
    }

    /// The word's bytes.
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn(b"Harrowmere", &WordList::EMPTY);
    /// assert_eq!(memory.words()[0].text(), b"Harrowmere");
    /// ```
    pub fn text(&self) -> &[u8] {
        self.bytes.get(..self.len as usize).unwrap_or(&[])
    }

    /// How many times the word was learned (saturates at `u16::MAX`).
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn(b"Greta", &WordList::EMPTY);
    /// memory.learn(b"Greta", &WordList::EMPTY);
    /// assert_eq!(memory.words()[0].count(), 2);
    /// ```
    pub fn count(&self) -> u16 {
        self.count
    }

    /// The memory's clock when the word was last learned: the number of words learned
    /// before it (see [`UserMemory::clock`]).
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn(b"hut", &WordList::EMPTY);
    /// memory.learn(b"base", &WordList::EMPTY);
    /// assert_eq!(memory.words()[1].last_used(), 1);
    /// ```
    pub fn last_used(&self) -> u32 {
        self.last_used
    }
}

/// What [`UserMemory::learn`] did with a word.
///
/// ```
/// use inkling_core::user_memory::{Learned, UserMemory};
/// use inkling_core::session::WordList;
/// let mut memory = UserMemory::<1>::new();
/// let deny = WordList::new(b"darn\n")?;
/// assert_eq!(memory.learn(b"Darn", &deny), Learned::Denied);
/// assert_eq!(memory.learn(b"a", &deny), Learned::NotAWord);
/// assert_eq!(memory.learn(b"hut", &deny), Learned::Added { slot: 0 });
/// assert_eq!(memory.learn(b"hut", &deny), Learned::Counted { slot: 0 });
/// assert_eq!(memory.learn(b"base", &deny), Learned::Replaced { slot: 0 });
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Learned {
    /// A new word, in a free slot.
    Added {
        /// Its slot (index into [`UserMemory::words`]).
        slot: usize,
    },
    /// A new word in place of the least recently used one (the memory was full).
    Replaced {
        /// Its slot.
        slot: usize,
    },
    /// A word already there: its count went up and it became the most recent.
    Counted {
        /// Its slot.
        slot: usize,
    },
    /// The deny list holds the word (in some case): not stored.
    Denied,
    /// Not stored: shorter than [`MIN_LEARNED_LEN`] or longer than
    /// [`MAX_WORD_LEN`] bytes, holding a word boundary byte,
    /// or not well-formed UTF-8.
    NotAWord,
}

/// The words the user has typed, at most `N`, each with its count and the time it was last
/// typed. The firmware chooses `N`; the memory takes
/// [`UserMemory::<N>::RAM_BYTES`](UserMemory::RAM_BYTES) of RAM and never more.
///
/// - **Learning.** [`learn`](UserMemory::learn) adds a word (count 1) or counts one already
///   there (words are compared byte for byte: "Hut" and "hut" are two words). Words of the
///   deny list, and what is no word (see [`Learned::NotAWord`]), are never stored.
/// - **Eviction.** When all `N` slots are taken, a new word replaces the least recently
///   used one (the smallest [`last_used`](LearnedWord::last_used); the first slot among
///   equals), whatever its count: the memory is a cache of the user's recent words.
/// - **Clock.** Each learned word advances the clock by one; at `u32::MAX` it stops, and
///   from then on eviction picks the first of the words last used at that time.
/// - **Clearing** is one call, [`clear`](UserMemory::clear) (and
///   [`FlashStore::clear`](crate::user_memory::FlashStore::clear) for the copy in flash).
/// - **Flash.** [`FlashStore`](crate::user_memory::FlashStore) keeps the memory across
///   reboots.
///
/// The memory holds what the user typed: names, places, perhaps codes. Clear it when the
/// device changes hands.
///
/// ```
/// use inkling_core::user_memory::UserMemory;
/// use inkling_core::session::WordList;
/// let mut memory = UserMemory::<3>::new();
/// memory.learn_text(b"Greta, Greta to Tamsel", &WordList::EMPTY);
/// assert_eq!((memory.len(), memory.count_of(b"Greta")), (3, 2));
/// // Full: "Hut" replaces "Greta", the word used least recently, though typed twice.
/// memory.learn(b"Hut", &WordList::EMPTY);
/// assert_eq!((memory.count_of(b"Greta"), memory.count_of(b"Hut")), (0, 1));
/// memory.clear();
/// assert!(memory.is_empty());
/// ```
#[derive(Debug, Clone)]
pub struct UserMemory<const N: usize> {
    pub(crate) words: heapless::Vec<LearnedWord, N>,
    pub(crate) clock: u32,
    /// Whether the memory was cleared since the flash store last saw it.
    pub(crate) cleared: bool,
}

impl<const N: usize> Default for UserMemory<N> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: usize> UserMemory<N> {
    /// Bytes of RAM the memory takes: `N` words of [`MAX_WORD_LEN`]
    /// bytes with their counts and times, and a few words of bookkeeping.
    ///
    /// ```
    /// use inkling_core::user_memory::UserMemory;
    /// assert!(UserMemory::<256>::RAM_BYTES <= 256 * 44 + 32);
    /// ```
    pub const RAM_BYTES: usize = core::mem::size_of::<Self>();

    /// An empty memory.
    ///
    /// ```
    /// assert!(inkling_core::user_memory::UserMemory::<16>::new().is_empty());
    /// ```
    pub const fn new() -> Self {
        UserMemory {
            words: heapless::Vec::new(),
            clock: 0,
            cleared: false,
        }
    }

    /// Learns one word (see [`UserMemory`] for the rules and [`Learned`] for the outcome).
    ///
    /// ```
    /// use inkling_core::user_memory::{Learned, UserMemory};
    /// use inkling_core::session::WordList;
    /// let mut memory = UserMemory::<4>::new();
    /// assert_eq!(memory.learn(b"Ulvenholt", &WordList::EMPTY), Learned::Added { slot: 0 });
    /// assert_eq!(memory.learn(b"two words", &WordList::EMPTY), Learned::NotAWord);
    /// ```
    pub fn learn(&mut self, word: &[u8], deny: &WordList<'_>) -> Learned {
        if !is_learnable(word) {
            return Learned::NotAWord;
        }
        if deny.contains(word) {
            return Learned::Denied;
        }
        let now = self.clock;
        self.clock = self.clock.saturating_add(1);
        if let Some((slot, entry)) = self
            .words
            .iter_mut()
            .enumerate()
            .find(|(_, w)| w.text() == word)
        {
            entry.count = entry.count.saturating_add(1);
            entry.last_used = now;
            entry.saved = false;
            return Learned::Counted { slot };
        }
        let fresh = LearnedWord::new(word, 1, now);
        if self.words.push(fresh).is_ok() {
            return Learned::Added {
                slot: self.words.len() - 1,
            };
        }
        let oldest = self
            .words
            .iter()
            .enumerate()
            .min_by_key(|(_, w)| w.last_used)
            .map(|(slot, _)| slot);
        match oldest.and_then(|slot| self.words.get_mut(slot).map(|w| (slot, w))) {
            Some((slot, entry)) => {
                *entry = fresh;
                Learned::Replaced { slot }
            }
            // Only a memory of no slots at all (`N == 0`) has none to replace.
            None => Learned::NotAWord,
        }
    }

    /// Learns every word of `text` in order (split at word boundaries, see
    /// [`is_boundary`]), e.g. a message when it is sent; returns
    /// how many were stored.
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// assert_eq!(memory.learn_text(b"Copy that, Idris. Over.", &WordList::EMPTY), 4);
    /// ```
    pub fn learn_text(&mut self, text: &[u8], deny: &WordList<'_>) -> usize {
        text.split(|&b| is_boundary(b))
            .filter(|word| {
                matches!(
                    self.learn(word, deny),
                    Learned::Added { .. } | Learned::Replaced { .. } | Learned::Counted { .. }
                )
            })
            .count()
    }

    /// Forgets every word (the copy in flash with the next
    /// [`FlashStore::save`](crate::user_memory::FlashStore::save), or at once with
    /// [`FlashStore::clear`](crate::user_memory::FlashStore::clear)).
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn(b"secret", &WordList::EMPTY);
    /// memory.clear();
    /// assert_eq!(memory.count_of(b"secret"), 0);
    /// ```
    pub fn clear(&mut self) {
        self.words.clear();
        self.clock = 0;
        self.cleared = true;
    }

    /// The words, in slot order.
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn_text(b"rescue base", &WordList::EMPTY);
    /// assert_eq!(memory.words()[1].text(), b"base");
    /// ```
    pub fn words(&self) -> &[LearnedWord] {
        &self.words
    }

    /// How many times `word` was learned (0 if it is not in the memory).
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn(b"Orlan", &WordList::EMPTY);
    /// assert_eq!((memory.count_of(b"Orlan"), memory.count_of(b"orlan")), (1, 0));
    /// ```
    pub fn count_of(&self, word: &[u8]) -> u16 {
        count_in(&self.words, word)
    }

    /// Words in the memory.
    ///
    /// ```
    /// assert_eq!(inkling_core::user_memory::UserMemory::<8>::new().len(), 0);
    /// ```
    pub fn len(&self) -> usize {
        self.words.len()
    }

    /// Whether the memory holds no word.
    ///
    /// ```
    /// assert!(inkling_core::user_memory::UserMemory::<8>::new().is_empty());
    /// ```
    pub fn is_empty(&self) -> bool {
        self.words.is_empty()
    }

    /// Words learned so far (counting repeats), the time the next word will get; it stops
    /// at `u32::MAX`.
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn_text(b"go go go", &WordList::EMPTY);
    /// assert_eq!(memory.clock(), 3);
    /// ```
    pub fn clock(&self) -> u32 {
        self.clock
    }
}

/// Bytes of RAM a [`UserMemory`] of `words` words takes, for a size known only at run time
/// (equal to [`UserMemory::<N>::RAM_BYTES`](UserMemory::RAM_BYTES) for `N = words`).
///
/// ```
/// use inkling_core::user_memory::{learned_words::ram_bytes_for, UserMemory};
/// assert_eq!(ram_bytes_for(256), UserMemory::<256>::RAM_BYTES);
/// ```
pub const fn ram_bytes_for(words: usize) -> usize {
    let align = core::mem::align_of::<UserMemory<0>>();
    let unaligned =
        core::mem::size_of::<UserMemory<0>>() + words * core::mem::size_of::<LearnedWord>();
    unaligned.div_ceil(align) * align
}

/// The count of `word` among `words` (0 if absent).
pub(crate) fn count_in(words: &[LearnedWord], word: &[u8]) -> u16 {
    words
        .iter()
        .find(|w| w.text() == word)
        .map_or(0, |w| w.count)
}

/// Whether `word` may be stored: [`MIN_LEARNED_LEN`] to `MAX_WORD_LEN` bytes of well-formed
/// UTF-8 with no word boundary.
pub(crate) fn is_learnable(word: &[u8]) -> bool {
    (MIN_LEARNED_LEN..=MAX_WORD_LEN).contains(&word.len())
        && !word.iter().any(|&b| is_boundary(b))
        && core::str::from_utf8(word).is_ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn eviction_replaces_the_least_recently_used_word_whatever_its_count() {
        // LRU replacement: the rule the type's docs state (common practice for caches, no
        // source needed beyond the definition).
        let mut m = UserMemory::<3>::new();
        let none = WordList::EMPTY;
        for w in [&b"aa"[..], b"aa", b"aa", b"bb", b"cc", b"bb"] {
            m.learn(w, &none);
        }
        // "aa" (count 3) was last used at time 2, "cc" at 4, "bb" at 5.
        assert_eq!(m.learn(b"dd", &none), Learned::Replaced { slot: 0 });
        assert_eq!(m.count_of(b"aa"), 0);
        assert_eq!(m.learn(b"ee", &none), Learned::Replaced { slot: 2 });
        assert_eq!(
            m.words()
                .iter()
                .map(|w| w.text())
                .collect::<heapless::Vec<_, 3>>(),
            [&b"dd"[..], b"bb", b"ee"]
        );
    }

    #[test]
    fn what_is_no_word_is_never_stored() {
        let mut m = UserMemory::<4>::new();
        let none = WordList::EMPTY;
        for w in [
            &b""[..],
            b"x",
            b"a b",
            b"hut.",
            b"\xc3",
            &[b'a'; MAX_WORD_LEN + 1],
        ] {
            assert_eq!(m.learn(w, &none), Learned::NotAWord, "{w:?}");
        }
        assert!(m.is_empty() && m.clock() == 0);
        assert_eq!(
            m.learn(&[b'a'; MAX_WORD_LEN], &none),
            Learned::Added { slot: 0 }
        );
        assert_eq!(
            m.learn("\u{e9}t\u{e9}".as_bytes(), &none),
            Learned::Added { slot: 1 }
        );
    }

    #[test]
    fn the_ram_formula_is_the_size_of_the_type() {
        // The compiler's layout (core::mem::size_of) is the reference.
        assert_eq!(ram_bytes_for(0), core::mem::size_of::<UserMemory<0>>());
        assert_eq!(ram_bytes_for(1), core::mem::size_of::<UserMemory<1>>());
        assert_eq!(ram_bytes_for(7), core::mem::size_of::<UserMemory<7>>());
        assert_eq!(ram_bytes_for(128), core::mem::size_of::<UserMemory<128>>());
        assert_eq!(
            ram_bytes_for(1000),
            core::mem::size_of::<UserMemory<1000>>()
        );
    }

    #[test]
    fn a_memory_of_no_slots_stores_nothing() {
        let mut m = UserMemory::<0>::new();
        assert_eq!(m.learn(b"hut", &WordList::EMPTY), Learned::NotAWord);
        assert!(m.is_empty());
    }
}
