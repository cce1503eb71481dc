//! Word lists kept as data in flash: a deny list and a lexicon.
//!
//! A list is the bytes of a text file: one word per line, lines separated by `\n` (a final
//! `\n` is optional), no empty lines, sorted strictly ascending by bytes (the order of
//! `LC_ALL=C sort -u`). Matching is exact and case-sensitive: put "The" in the list too if it
//! should match at the start of a sentence.
//!
//! Lookup is a binary search over byte offsets: pick the middle byte of the range still in
//! question, walk back to the start of its line and forward to its end, compare that line
//! with the key and keep the half that can hold the first line `>=` the key. Every round
//! removes at least one line, so a lookup reads `O(log n)` lines; nothing is copied and no
//! index is built, so the list costs no RAM.

use core::cmp::Ordering;

use crate::error::Error;

/// A sorted, newline-separated list of words, borrowed (typically from flash).
///
/// ```
/// use inkling_core::session::WordList;
/// let list = WordList::new(b"apple\napply\nbanana\n")?;
/// assert!(list.contains(b"apply") && !list.contains(b"app"));
/// assert!(list.has_prefix(b"app") && !list.has_prefix(b"ax"));
/// assert!(WordList::new(b"banana\napple").is_err()); // not sorted
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct WordList<'a> {
    bytes: &'a [u8],
}

impl<'a> WordList<'a> {
    /// The list with no words.
    ///
    /// ```
    /// assert!(inkling_core::session::WordList::EMPTY.is_empty());
    /// ```
    pub const EMPTY: WordList<'static> = WordList { bytes: b"" };

    /// Checks `bytes` once (non-empty lines, strictly ascending) and wraps it. The error
    /// [`Error::BadWordList`] names the first line at fault.
    ///
    /// ```
    /// use inkling_core::{Error, session::WordList};
    /// assert_eq!(WordList::new(b"b\na\n"), Err(Error::BadWordList { line: 2, offset: 2 }));
    /// ```
    pub fn new(bytes: &'a [u8]) -> Result<Self, Error> {
        let mut previous: Option<&[u8]> = None;
        let mut offset = 0;
        for (line, word) in lines(bytes).enumerate() {
            let in_order = previous.is_none_or(|p| p < word);
            if word.is_empty() || !in_order {
                return Err(Error::BadWordList {
                    line: line + 1,
                    offset,
                });
            }
            previous = Some(word);
            offset += word.len() + 1;
        }
        Ok(WordList { bytes })
    }

    /// Whether the list has no words.
    ///
    /// ```
    /// assert!(!inkling_core::session::WordList::new(b"a")?.is_empty());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn is_empty(&self) -> bool {
        self.bytes.is_empty()
    }

    /// Whether `word` is a line of the list.
    ///
    /// ```
    /// let list = inkling_core::session::WordList::new(b"cat\ncats\n")?;
    /// assert!(list.contains(b"cat") && !list.contains(b"ca"));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn contains(&self, word: &[u8]) -> bool {
        self.first_at_least(word) == Some(word)
    }

    /// Whether some word of the list starts with `prefix` (the empty prefix: whether the
    /// list has any word).
    ///
    /// ```
    /// let list = inkling_core::session::WordList::new(b"cat\ncats\n")?;
    /// assert!(list.has_prefix(b"") && list.has_prefix(b"cats") && !list.has_prefix(b"catz"));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn has_prefix(&self, prefix: &[u8]) -> bool {
        self.first_at_least(prefix)
            .is_some_and(|w| w.starts_with(prefix))
    }

    /// The first line that is `>= key` bytewise, if any.
    fn first_at_least(&self, key: &[u8]) -> Option<&'a [u8]> {
        let bytes = self.bytes;
        // Invariant: `lo` is a line start, every line starting before `lo` is < key, and
        // every line starting at or after `hi` is >= key.
        let (mut lo, mut hi) = (0, bytes.len());
        while lo < hi {
            let mid = lo + (hi - lo) / 2;
            let start = bytes
                .get(lo..mid)
                .and_then(|s| s.iter().rposition(|&b| b == b'\n'))
                .map_or(lo, |p| lo + p + 1);
            let end = line_end(bytes, start);
            let line = bytes.get(start..end).unwrap_or(&[]);
            if line.cmp(key) == Ordering::Less {
                lo = (end + 1).min(hi);
            } else {
                hi = start;
            }
        }
        let end = line_end(bytes, lo);
        bytes.get(lo..end).filter(|line| !line.is_empty())
    }
}

/// The index of the `\n` ending the line that starts at `start` (or the length).
fn line_end(bytes: &[u8], start: usize) -> usize {
    bytes
        .get(start..)
        .and_then(|s| s.iter().position(|&b| b == b'\n'))
        .map_or(bytes.len(), |p| start + p)
}

/// The lines of `bytes`, without a final empty line after a trailing `\n`.
fn lines(bytes: &[u8]) -> impl Iterator<Item = &[u8]> {
    let body = bytes.strip_suffix(b"\n").unwrap_or(bytes);
    let empty = body.is_empty() && bytes.is_empty();
    body.split(|&b| b == b'\n').filter(move |_| !empty)
}

/// Which words a search may offer: never a word of `deny`; with a lexicon, only its words
/// (and beams are pruned to prefixes of its words).
///
/// ```
/// use inkling_core::session::{WordFilter, WordList};
/// let filter = WordFilter {
///     deny: WordList::new(b"darn\n")?,
///     lexicon: Some(WordList::new(b"dark\ndarn\ndart\n")?),
/// };
/// assert!(filter.offers(b"dart") && !filter.offers(b"darn") && !filter.offers(b"dare"));
/// assert!(filter.may_extend(b"dar") && !filter.may_extend(b"dx"));
/// # Ok::<(), inkling_core::Error>(())
/// ```
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct WordFilter<'a> {
    /// Words never offered.
    pub deny: WordList<'a>,
    /// If given, the only words offered.
    pub lexicon: Option<WordList<'a>>,
}

impl WordFilter<'_> {
    /// Whether `word` may be offered.
    ///
    /// ```
    /// use inkling_core::session::{WordFilter, WordList};
    /// let filter = WordFilter { deny: WordList::new(b"no")?, lexicon: None };
    /// assert!(filter.offers(b"yes") && !filter.offers(b"no"));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn offers(&self, word: &[u8]) -> bool {
        !self.deny.contains(word) && self.lexicon.is_none_or(|l| l.contains(word))
    }

    /// Whether a word starting with `prefix` may still be offered later.
    ///
    /// ```
    /// use inkling_core::session::{WordFilter, WordList};
    /// let filter = WordFilter { deny: WordList::EMPTY, lexicon: Some(WordList::new(b"yes")?) };
    /// assert!(filter.may_extend(b"ye") && !filter.may_extend(b"no"));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn may_extend(&self, prefix: &[u8]) -> bool {
        self.lexicon.is_none_or(|l| l.has_prefix(prefix))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // The reference is a plain linear scan over the same lines (the definition of the
    // lookup), checked for every prefix of every word and some words not in the list.
    fn linear_first_at_least<'a>(bytes: &'a [u8], key: &[u8]) -> Option<&'a [u8]> {
        lines(bytes).find(|l| *l >= key)
    }

    #[test]
    fn binary_search_agrees_with_a_linear_scan() {
        let lists: [&[u8]; 5] = [
            b"",
            b"a",
            b"a\nab\nabc\nb\nba\nc\n",
            b"apple\napply\nbanana\nband\nbandana\ncan\ncar\ncart\nz\n",
            b"aa\nab\nac\nad\nae\naf\nag\nah\nai\naj\nak\nal\nam\nan\nao\nap",
        ];
        let extra: [&[u8]; 8] = [b"", b"0", b"zz", b"an", b"banc", b"ca", b"aq", b"\xff"];
        for bytes in lists {
            let list = WordList::new(bytes).unwrap();
            for word in lines(bytes).chain(extra.iter().copied()) {
                for n in 0..=word.len() {
                    let key = &word[..n];
                    assert_eq!(
                        list.first_at_least(key),
                        linear_first_at_least(bytes, key),
                        "{:?} in {:?}",
                        key,
                        bytes
                    );
                    assert_eq!(list.contains(key), lines(bytes).any(|l| l == key));
                    assert_eq!(
                        list.has_prefix(key),
                        lines(bytes).any(|l| l.starts_with(key))
                    );
                }
            }
        }
    }

    #[test]
    fn bad_lists_name_the_line_and_offset() {
        assert_eq!(
            WordList::new(b"ab\nab\n"),
            Err(Error::BadWordList { line: 2, offset: 3 })
        );
        assert_eq!(
            WordList::new(b"ab\n\ncd"),
            Err(Error::BadWordList { line: 2, offset: 3 })
        );
        assert_eq!(
            WordList::new(b"\n"),
            Err(Error::BadWordList { line: 1, offset: 0 })
        );
        assert!(WordList::new(b"b\na").is_err());
        assert!(WordList::new(b"a\nb").is_ok());
    }

    #[test]
    fn empty_lexicon_offers_nothing_and_empty_deny_list_denies_nothing() {
        let none = WordFilter {
            deny: WordList::EMPTY,
            lexicon: Some(WordList::EMPTY),
        };
        assert!(!none.offers(b"a") && !none.may_extend(b""));
        let all = WordFilter::default();
        assert!(all.offers(b"a") && all.may_extend(b"xyz"));
    }
}
