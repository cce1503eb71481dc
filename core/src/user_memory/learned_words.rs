//! [`UserMemory`]: the words one device's user has typed, with counts and recency, in a
//! fixed capacity.

use crate::session::word_boundary::is_boundary;
use crate::session::word_list::WordList;
use crate::session::MAX_WORD_LEN;
use crate::user_memory::learned_phrases::{phrase_ending, LearnedPhrase};

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
pub type LearnedWord = LearnedText<MAX_WORD_LEN>;

/// A text the memory keeps, of at most `L` bytes, with how often it was learned and when
/// last: a word ([`LearnedWord`]) or a phrase
/// ([`LearnedPhrase`]).
///
/// ```
/// use inkling_core::user_memory::UserMemory;
/// use inkling_core::session::WordList;
/// let mut memory = UserMemory::<8, 4>::new();
/// memory.learn_text(b"walked down with Greta. walked down with Greta.", &WordList::EMPTY);
/// // A phrase ends at each word: "walked down", "walked down with", then this one.
/// let phrase = &memory.phrases()[2];
/// assert_eq!((phrase.text(), phrase.count()), (&b"walked down with Greta"[..], 2));
/// ```
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LearnedText<const L: usize> {
    bytes: [u8; L],
    len: u8,
    count: u16,
    last_used: u32,
    /// Whether the flash store holds this text as it is now.
    pub(crate) saved: bool,
}

impl<const L: usize> LearnedText<L> {
    /// A text of `text` (whose length the caller checked), counted `count` times, last at
    /// `last_used`, not yet saved.
    pub(crate) fn new(text: &[u8], count: u16, last_used: u32) -> Self {
        let mut bytes = [0u8; L];
        let len = text.len().min(L).min(usize::from(u8::MAX));
        for (b, &t) in bytes.iter_mut().zip(text) {
            *b = t;
        }
        LearnedText {
            bytes,
            len: len as u8,
            count,
            last_used,
            saved: false,
        }
    }

    /// The text's bytes.
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

    /// How many times the text was learned (saturates at `u16::MAX`).
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

    /// The memory's clock when the text was last learned: the number of words learned
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
/// typed, and the phrases they typed, at most `P` (none unless the firmware asks for them).
/// The firmware chooses `N` and `P`; the memory takes
/// [`UserMemory::<N, P>::RAM_BYTES`](UserMemory::RAM_BYTES) of RAM and never more.
///
/// - **Learning.** [`learn`](UserMemory::learn) adds a word (count 1) or counts one already
///   there (words are compared byte for byte: "Hut" and "hut" are two words). Words of the
///   deny list, and what is no word (see [`Learned::NotAWord`]), are never stored.
/// - **Phrases.** [`learn_phrase`](UserMemory::learn_phrase) keeps the last words typed as
///   one phrase (see [`learned_phrases`](crate::user_memory::learned_phrases) for which
///   words), counted the same way; a phrase never holds a word of the deny list. A search
///   drafts the rest of a phrase whose start the user is typing and lets the model verify it
///   (see [`draft`](crate::session::draft)).
/// - **Eviction.** When all `N` word slots are taken, a new word replaces the least recently
///   used one (the smallest [`last_used`](LearnedText::last_used); the first slot among
///   equals), whatever its count: the memory is a cache of the user's recent words. Phrases
///   are replaced the same way among the `P` phrase slots.
/// - **Clock.** Each learned word advances the clock by one (a phrase takes the time of its
///   last word); at `u32::MAX` it stops, and from then on eviction picks the first of the
///   texts last used at that time.
/// - **Clearing** is one call, [`clear`](UserMemory::clear), for words and phrases (and
///   [`FlashStore::clear`](crate::user_memory::FlashStore::clear) for the copy in flash).
/// - **Flash.** [`FlashStore`](crate::user_memory::FlashStore) keeps the memory across
///   reboots.
///
/// The memory holds what the user typed: names, places, perhaps codes, and with phrases
/// whole stretches of their messages. Clear it when the device changes hands.
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
pub struct UserMemory<const N: usize, const P: usize = 0> {
    pub(crate) words: heapless::Vec<LearnedWord, N>,
    pub(crate) phrases: heapless::Vec<LearnedPhrase, P>,
    pub(crate) clock: u32,
    /// Whether the memory was cleared since the flash store last saw it.
    pub(crate) cleared: bool,
}

impl<const N: usize, const P: usize> Default for UserMemory<N, P> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const N: usize, const P: usize> UserMemory<N, P> {
    /// Bytes of RAM the memory takes: `N` words of [`MAX_WORD_LEN`] bytes and `P` phrases of
    /// [`MAX_PHRASE_LEN`](crate::user_memory::MAX_PHRASE_LEN) bytes with their counts and times, and a few words of bookkeeping.
    ///
    /// ```
    /// use inkling_core::user_memory::UserMemory;
    /// assert!(UserMemory::<256>::RAM_BYTES <= 256 * 44 + 32);
    /// assert!(UserMemory::<256, 64>::RAM_BYTES <= 256 * 44 + 64 * 60 + 32);
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
            phrases: heapless::Vec::new(),
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
        remember(&mut self.words, word, now)
    }

    /// Learns the phrase that ends at the end of `text`, the text typed so far up to the
    /// word just ended (see [`phrase_ending`] for which words it takes): [`Learned::Denied`]
    /// if the last word is on the deny list, [`Learned::NotAWord`] if no phrase ends there
    /// (or the memory keeps no phrases, `P == 0`). The clock does not move.
    ///
    /// ```
    /// use inkling_core::user_memory::{Learned, UserMemory};
    /// use inkling_core::session::WordList;
    /// let mut memory = UserMemory::<8, 2>::new();
    /// let text = b"Rope bag checked: 60 m rope";
    /// assert_eq!(memory.learn_phrase(text, &WordList::EMPTY), Learned::Added { slot: 0 });
    /// assert_eq!(memory.phrases()[0].text(), b"checked: 60 m rope");
    /// assert_eq!(memory.learn_phrase(b"Rope", &WordList::EMPTY), Learned::NotAWord);
    /// ```
    pub fn learn_phrase(&mut self, text: &[u8], deny: &WordList<'_>) -> Learned {
        match phrase_ending(text, deny) {
            Ok(phrase) => remember(&mut self.phrases, phrase, self.clock.saturating_sub(1)),
            Err(outcome) => outcome,
        }
    }

    /// Learns every word of `text` in order (split at word boundaries, see
    /// [`is_boundary`]), and after each the phrase that ends with it, e.g. a message when
    /// it is sent; returns how many words were stored.
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// assert_eq!(memory.learn_text(b"Copy that, Idris. Over.", &WordList::EMPTY), 4);
    /// ```
    pub fn learn_text(&mut self, text: &[u8], deny: &WordList<'_>) -> usize {
        let mut stored = 0;
        let mut start = 0;
        for end in 0..=text.len() {
            if text.get(end).is_some_and(|&b| !is_boundary(b)) {
                continue;
            }
            let word = text.get(start..end).unwrap_or(&[]);
            start = end + 1;
            if word.is_empty() {
                continue;
            }
            if matches!(
                self.learn(word, deny),
                Learned::Added { .. } | Learned::Replaced { .. } | Learned::Counted { .. }
            ) {
                stored += 1;
            }
            self.learn_phrase(text.get(..end).unwrap_or(&[]), deny);
        }
        stored
    }

    /// Forgets every word and phrase (the copy in flash with the next
    /// [`FlashStore::save`](crate::user_memory::FlashStore::save), or at once with
    /// [`FlashStore::clear`](crate::user_memory::FlashStore::clear)).
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8, 2>::new();
    /// memory.learn_text(b"secret code", &WordList::EMPTY);
    /// memory.clear();
    /// assert_eq!(memory.count_of(b"secret"), 0);
    /// assert!(memory.phrases().is_empty());
    /// ```
    pub fn clear(&mut self) {
        self.words.clear();
        self.phrases.clear();
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

    /// The phrases, in slot order.
    ///
    /// ```
    /// # use inkling_core::{user_memory::UserMemory, session::WordList};
    /// let mut memory = UserMemory::<8, 4>::new();
    /// memory.learn_text(b"thick fog", &WordList::EMPTY);
    /// assert_eq!(memory.phrases()[0].text(), b"thick fog");
    /// ```
    pub fn phrases(&self) -> &[LearnedPhrase] {
        &self.phrases
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

    /// Whether the memory holds no word and no phrase.
    ///
    /// ```
    /// assert!(inkling_core::user_memory::UserMemory::<8>::new().is_empty());
    /// ```
    pub fn is_empty(&self) -> bool {
        self.words.is_empty() && self.phrases.is_empty()
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

/// Learns `text` into `list` at time `now`: counts it if there, else adds it, replacing the
/// least recently used when the list is full (the first among equals).
fn remember<const L: usize, const C: usize>(
    list: &mut heapless::Vec<LearnedText<L>, C>,
    text: &[u8],
    now: u32,
) -> Learned {
    if let Some((slot, entry)) = list.iter_mut().enumerate().find(|(_, w)| w.text() == text) {
        entry.count = entry.count.saturating_add(1);
        entry.last_used = now;
        entry.saved = false;
        return Learned::Counted { slot };
    }
    let fresh = LearnedText::new(text, 1, now);
    if list.push(fresh).is_ok() {
        return Learned::Added {
            slot: list.len() - 1,
        };
    }
    let oldest = list
        .iter()
        .enumerate()
        .min_by_key(|(_, w)| w.last_used)
        .map(|(slot, _)| slot);
    match oldest.and_then(|slot| list.get_mut(slot).map(|w| (slot, w))) {
        Some((slot, entry)) => {
            *entry = fresh;
            Learned::Replaced { slot }
        }
        // Only a list of no slots at all (`C == 0`) has none to replace.
        None => Learned::NotAWord,
    }
}

/// Bytes of RAM a [`UserMemory`] of `words` words and `phrases` phrases takes, for sizes
/// known only at run time (equal to
/// [`UserMemory::<N, P>::RAM_BYTES`](UserMemory::RAM_BYTES) for `N = words`, `P = phrases`).
///
/// ```
/// use inkling_core::user_memory::{learned_words::ram_bytes_for, UserMemory};
/// assert_eq!(ram_bytes_for(256, 0), UserMemory::<256>::RAM_BYTES);
/// assert_eq!(ram_bytes_for(256, 64), UserMemory::<256, 64>::RAM_BYTES);
/// ```
pub const fn ram_bytes_for(words: usize, phrases: usize) -> usize {
    let align = core::mem::align_of::<UserMemory<0, 0>>();
    let unaligned = core::mem::size_of::<UserMemory<0, 0>>()
        + words * core::mem::size_of::<LearnedWord>()
        + phrases * core::mem::size_of::<LearnedPhrase>();
    unaligned.div_ceil(align) * align
}

/// The count of `word` among `words` (0 if absent).
pub(crate) fn count_in<const L: usize>(words: &[LearnedText<L>], word: &[u8]) -> u16 {
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
        assert_eq!(ram_bytes_for(0, 0), core::mem::size_of::<UserMemory<0>>());
        assert_eq!(
            ram_bytes_for(3, 5),
            core::mem::size_of::<UserMemory<3, 5>>()
        );
        assert_eq!(
            ram_bytes_for(0, 64),
            core::mem::size_of::<UserMemory<0, 64>>()
        );
        assert_eq!(ram_bytes_for(1, 0), core::mem::size_of::<UserMemory<1>>());
        assert_eq!(ram_bytes_for(7, 0), core::mem::size_of::<UserMemory<7>>());
        assert_eq!(
            ram_bytes_for(128, 0),
            core::mem::size_of::<UserMemory<128>>()
        );
        assert_eq!(
            ram_bytes_for(1000, 0),
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
