//! Word lists kept as data in flash: a deny list and a lexicon.
//!
//! A list is the bytes of a text file: one word per line, lines separated by `\n` (a final
//! `\n` is optional), no empty lines, sorted strictly ascending in [`word_order`]: bytewise
//! after folding case, so a list of lower-case words in the order of `LC_ALL=C sort -u` is
//! one.
//!
//! Matching ignores case: a lexicon word "tamsel" lets "Tamsel" and "TAMSEL" be offered, and
//! a denied word is denied in every case. Case is folded for the ASCII letters `A`–`Z` and
//! for the Latin-1 letters `À`–`Þ` (U+00C0–U+00DE but `×`), as UTF-8, onto their small
//! forms; other bytes are compared as they are.
//!
//! Lookup is a binary search over byte offsets: pick the middle byte of the range still in
//! question, walk back to the start of its line and forward to its end, compare that line
//! with the key and keep the half that can hold the first line `>=` the key. Every round
//! removes at least one line, so a lookup reads `O(log n)` lines; nothing is copied and no
//! index is built, so the list costs no RAM.

use core::cmp::Ordering;

use crate::error::Error;

/// The order of a word list: bytewise, after folding case as the [module docs](self) say.
/// Words equal in this order are the same word to a list.
///
/// ```
/// use core::cmp::Ordering;
/// use inkling_core::session::word_list::word_order;
/// assert_eq!(word_order(b"Tamsel", b"tamsel"), Ordering::Equal);
/// assert_eq!(word_order("\u{c9}t\u{c9}".as_bytes(), "\u{e9}t\u{e9}".as_bytes()), Ordering::Equal); // ÉTÉ, été
/// assert_eq!(word_order(b"Zebra", b"apple"), Ordering::Greater);
/// ```
pub fn word_order(a: &[u8], b: &[u8]) -> Ordering {
    folded(a).cmp(folded(b))
}

/// Whether `word` starts with `prefix`, case folded.
fn starts_with_folded(word: &[u8], prefix: &[u8]) -> bool {
    prefix.len() <= word.len() && folded(prefix).zip(folded(word)).all(|(p, w)| p == w)
}

/// The bytes of `word` with case folded: `A`–`Z` to `a`–`z`, and the second byte of the
/// UTF-8 form of `À`–`Þ` (`C3 80`–`C3 9E`, but `C3 97`, `×`) to that of `à`–`þ` (`+ 0x20`).
fn folded(word: &[u8]) -> impl Iterator<Item = u8> + '_ {
    word.iter().scan(0u8, |previous, &byte| {
        let folded = match byte {
            b'A'..=b'Z' => byte + 0x20,
            0x80..=0x9E if *previous == 0xC3 && byte != 0x97 => byte + 0x20,
            _ => byte,
        };
        *previous = byte;
        Some(folded)
    })
}

/// A sorted, newline-separated list of words, borrowed (typically from flash), matched
/// without regard to case.
///
/// ```
/// use inkling_core::session::WordList;
/// let list = WordList::new(b"apple\napply\nbanana\n")?;
/// assert!(list.contains(b"apply") && !list.contains(b"app"));
/// assert!(list.contains(b"Apply") && list.has_prefix(b"BAN"));
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

    /// Checks `bytes` once (non-empty lines, strictly ascending in [`word_order`]) and
    /// wraps it. The error [`Error::BadWordList`] names the first line at fault; two lines
    /// that differ only in case are one word twice, so the second is at fault.
    ///
    /// ```
    /// use inkling_core::{Error, session::WordList};
    /// assert_eq!(WordList::new(b"b\na\n"), Err(Error::BadWordList { line: 2, offset: 2 }));
    /// assert_eq!(WordList::new(b"Ab\nab\n"), Err(Error::BadWordList { line: 2, offset: 3 }));
    /// ```
    pub fn new(bytes: &'a [u8]) -> Result<Self, Error> {
        let mut previous: Option<&[u8]> = None;
        let mut offset = 0;
        for (line, word) in lines(bytes).enumerate() {
            let in_order = previous.is_none_or(|p| word_order(p, word) == Ordering::Less);
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

    /// Whether `word` is a line of the list, in any case.
    ///
    /// ```
    /// let list = inkling_core::session::WordList::new(b"cat\ncats\n")?;
    /// assert!(list.contains(b"cat") && list.contains(b"CaT") && !list.contains(b"ca"));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn contains(&self, word: &[u8]) -> bool {
        self.first_at_least(word)
            .is_some_and(|line| word_order(line, word) == Ordering::Equal)
    }

    /// Whether some word of the list starts with `prefix`, in any case (the empty prefix:
    /// whether the list has any word).
    ///
    /// ```
    /// let list = inkling_core::session::WordList::new(b"cat\ncats\n")?;
    /// assert!(list.has_prefix(b"") && list.has_prefix(b"cats") && !list.has_prefix(b"catz"));
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn has_prefix(&self, prefix: &[u8]) -> bool {
        self.first_at_least(prefix)
            .is_some_and(|w| starts_with_folded(w, prefix))
    }

    /// The first line that is `>= key` in [`word_order`], if any.
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
            if word_order(line, key) == Ordering::Less {
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
/// (and beams are pruned to prefixes of its words). Both match in any case.
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
    fn matching_ignores_case_as_unicode_lowercase_does() {
        extern crate std;
        use std::string::ToString;
        // Reference: the standard library's `str::to_lowercase` (Unicode's lowercase
        // mapping), on words of ASCII and Latin-1 letters, the letters this list folds.
        let words = ["hut", "tamsel", "\u{e9}t\u{e9}", "\u{fe}orn"]; // été, þorn
        let text = words.join("\n");
        let list = WordList::new(text.as_bytes()).unwrap();
        let queries = [
            "HUT",
            "Hut",
            "hUTS",
            "TAMSEL",
            "tAmSeL",
            "Tams",
            "\u{c9}T\u{c9}",
            "\u{c9}t\u{e9}",
            "ete",
            "\u{de}ORN",
            "\u{de}",
            "\u{d7}",
            "\u{f7}",
            "Z",
            "",
        ];
        for query in queries {
            let lower = query.to_lowercase();
            let contained = words.iter().any(|w| w.to_lowercase() == lower);
            assert_eq!(list.contains(query.as_bytes()), contained, "{query}");
            let prefixed = words.iter().any(|w| w.to_lowercase().starts_with(&lower));
            assert_eq!(list.has_prefix(query.as_bytes()), prefixed, "{query}");
        }
        // A denied word is denied in every case.
        let filter = WordFilter {
            deny: WordList::new(b"darn").unwrap(),
            lexicon: None,
        };
        for case in ["darn", "Darn", "DARN", "dArN"] {
            assert!(!filter.offers(case.as_bytes()), "{case}");
        }
        assert!(filter.offers(b"dart"));
        // Lines the same but for case are one word twice.
        let twice = ["Hut", "hut"].join("\n").to_string();
        assert_eq!(
            WordList::new(twice.as_bytes()),
            Err(Error::BadWordList { line: 2, offset: 4 })
        );
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
