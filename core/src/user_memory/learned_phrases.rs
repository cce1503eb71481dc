//! Phrases: the last few words the user typed, kept as one text so that a search can offer
//! their rest when the user types their start again (see [`draft`](crate::session::draft)).
//!
//! **Which words a phrase holds.** When a word ends, the phrase that ends with it is the
//! last up to [`MAX_PHRASE_WORDS`] words before it and it, with the boundary bytes between
//! them exactly as typed (`"checked: 60 m rope"`), such that:
//! - it holds at least [`MIN_PHRASE_WORDS`] words and at most [`MAX_PHRASE_LEN`] bytes (older
//!   words are left out until it fits);
//! - it does not reach back across the end of a sentence or line (a boundary run holding
//!   `.`, `!`, `?`, `\n` or `\r`, see [`ends_sentence`]): a phrase is part of one sentence;
//! - it holds no word of the deny list (it starts after the last such word) and is
//!   well-formed UTF-8.
//!
//! So every word end stores one phrase, a window of the words typed, and a phrase typed
//! again is counted. The first word of the text given counts as a whole word.

use crate::session::word_boundary::is_boundary;
use crate::session::word_list::WordList;
use crate::user_memory::learned_words::{Learned, LearnedText};

/// The longest phrase kept, in bytes. A phrase suggestion is at most this long too.
///
/// ```
/// assert_eq!(inkling_core::user_memory::MAX_PHRASE_LEN, 48);
/// ```
pub const MAX_PHRASE_LEN: usize = 48;

/// The most words of a phrase: the word that ends it and up to three before it.
///
/// ```
/// assert_eq!(inkling_core::user_memory::learned_phrases::MAX_PHRASE_WORDS, 4);
/// ```
pub const MAX_PHRASE_WORDS: usize = 4;

/// The fewest words of a phrase: one word alone is the word memory's.
///
/// ```
/// assert_eq!(inkling_core::user_memory::learned_phrases::MIN_PHRASE_WORDS, 2);
/// ```
pub const MIN_PHRASE_WORDS: usize = 2;

/// One phrase of the memory: its bytes as typed, how often it was learned and when last.
///
/// ```
/// use inkling_core::user_memory::UserMemory;
/// use inkling_core::session::WordList;
/// let mut memory = UserMemory::<8, 8>::new();
/// memory.learn_text(b"booked for tonight", &WordList::EMPTY);
/// assert_eq!(memory.phrases()[1].text(), b"booked for tonight");
/// ```
pub type LearnedPhrase = LearnedText<MAX_PHRASE_LEN>;

/// Whether a boundary byte ends a sentence or a line, so that no phrase reaches across it.
///
/// ```
/// use inkling_core::user_memory::learned_phrases::ends_sentence;
/// assert!(ends_sentence(b'.') && ends_sentence(b'\n') && !ends_sentence(b','));
/// ```
pub const fn ends_sentence(byte: u8) -> bool {
    matches!(byte, b'.' | b'!' | b'?' | b'\n' | b'\r')
}

/// The phrase that ends at the end of `text` (see the [module docs](self)), or why there is
/// none: [`Learned::Denied`] when the last word is on the deny list, [`Learned::NotAWord`]
/// otherwise (text ending in a boundary, fewer than two words, not UTF-8).
///
/// ```
/// use inkling_core::session::WordList;
/// use inkling_core::user_memory::learned_phrases::phrase_ending;
/// let none = WordList::EMPTY;
/// assert_eq!(phrase_ending(b"Quiet day. Water tank half full", &none), Ok(&b"Water tank half full"[..]));
/// assert_eq!(phrase_ending(b"Over. Base here", &none), Ok(&b"Base here"[..]));
/// assert!(phrase_ending(b"Over. Base", &none).is_err());
/// let deny = WordList::new(b"tank\n")?;
/// assert_eq!(phrase_ending(b"Water tank half full", &deny), Ok(&b"half full"[..]));
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub fn phrase_ending<'t>(text: &'t [u8], deny: &WordList<'_>) -> Result<&'t [u8], Learned> {
    let end = text.len();
    if text.last().is_none_or(|&b| is_boundary(b)) {
        return Err(Learned::NotAWord);
    }
    let mut start = end;
    let mut words = 0usize;
    let mut word_end = end;
    while words < MAX_PHRASE_WORDS {
        let head = text.get(..word_end).unwrap_or(&[]);
        let word_start = head
            .iter()
            .rposition(|&b| is_boundary(b))
            .map_or(0, |p| p + 1);
        let word = head.get(word_start..).unwrap_or(&[]);
        if deny.contains(word) {
            if words == 0 {
                return Err(Learned::Denied);
            }
            break;
        }
        if end - word_start > super::MAX_PHRASE_LEN {
            break;
        }
        start = word_start;
        words += 1;
        // The boundary bytes before the word: a sentence end, or the start, ends the phrase.
        let before = text.get(..word_start).unwrap_or(&[]);
        let gap_start = before
            .iter()
            .rposition(|&b| !is_boundary(b))
            .map_or(0, |p| p + 1);
        let gap = before.get(gap_start..).unwrap_or(&[]);
        if gap_start == 0 || gap.iter().any(|&b| ends_sentence(b)) {
            break;
        }
        word_end = gap_start;
    }
    let phrase = text.get(start..).unwrap_or(&[]);
    if words < MIN_PHRASE_WORDS || core::str::from_utf8(phrase).is_err() {
        return Err(Learned::NotAWord);
    }
    Ok(phrase)
}

/// Whether `text` may be a stored phrase (the reading rule of the
/// [flash layout](super::flash_layout)): at most [`MAX_PHRASE_LEN`] bytes of UTF-8, starting
/// and ending with a word byte, holding a boundary and no sentence end.
pub(crate) fn is_storable_phrase(text: &[u8]) -> bool {
    text.len() <= MAX_PHRASE_LEN
        && text.first().is_some_and(|&b| !is_boundary(b))
        && text.last().is_some_and(|&b| !is_boundary(b))
        && text.iter().any(|&b| is_boundary(b))
        && !text.iter().any(|&b| ends_sentence(b))
        && core::str::from_utf8(text).is_ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_phrase_is_at_most_four_words_of_one_sentence_within_the_byte_limit() {
        let none = WordList::EMPTY;
        assert_eq!(
            phrase_ending(b"36 guests, 2 booked for tonight", &none),
            Ok(&b"2 booked for tonight"[..])
        );
        // A word whose addition passes 48 bytes is left out, and the older ones with it.
        let long = b"aaaaaaaaaaaaaaaaaaaaaaaa bbbbbbbbbbbbbbbbbbbbbb cc";
        assert_eq!(
            phrase_ending(long, &none),
            Ok(&b"bbbbbbbbbbbbbbbbbbbbbb cc"[..])
        );
        assert_eq!(
            phrase_ending(b"end.\nnew line", &none),
            Ok(&b"new line"[..])
        );
        assert_eq!(phrase_ending(b"one,", &none), Err(Learned::NotAWord));
        assert_eq!(phrase_ending(b"\xc3 x", &none), Err(Learned::NotAWord));
    }
}
