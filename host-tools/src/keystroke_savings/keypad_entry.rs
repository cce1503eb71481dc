//! 12-key entry on a text: how often the intended word is the first one offered for its
//! ITU-T E.161 digits, and the keystrokes per character that entry costs.
//!
//! **Keystrokes per character** (MacKenzie 2002, "KSPC (Keystrokes per Character) as a
//! Characteristic of Text Entry Techniques", Mobile HCI 2002): the key presses needed to
//! enter a text divided by its characters. Counted here, for a writer of 12-key
//! disambiguating entry:
//! - a word of `n` letters costs its `n` digit keys, plus one "next" press for each word
//!   ranked above it in the list offered for those digits (the words offered are the
//!   [`OFFERED`] best);
//! - a word that is not in that list is spelled by multi-tap instead (each letter costs its
//!   place on the key, e.g. `c` three presses of 2; E.161's letter order), plus one press to
//!   switch to multi-tap and one back;
//! - every other byte (space, punctuation, digit) costs one press: a simplification, since
//!   punctuation usually takes several on a real keypad.
//!
//! Only words of ASCII letters are entered as digits; a word is matched without regard to
//! case. The baseline is a dictionary ordered by word frequency in a corpus (the classic
//! disambiguation list), with the same counting.

use inkling_core::engine::weights::Weights;
use inkling_core::session::{is_boundary, KeyMap, SearchOptions, DEFAULT_HISTORY, MAX_WORD_LEN};
use inkling_core::Error;

use super::frequency_baseline::FrequencyBaseline;
use super::session_memory::session_memory;

/// Words offered for one sequence of digits (the session's largest beam count).
pub const OFFERED: usize = 16;

/// Key presses and hits of one way of 12-key entry over a text.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct KeypadCount {
    /// Bytes of the text.
    pub chars: usize,
    /// Words entered as digits.
    pub words: usize,
    /// Of those, the ones offered first for their digits.
    pub first: usize,
    /// Of those, the ones in the list at all.
    pub listed: usize,
    /// Key presses for the whole text.
    pub presses: usize,
}

impl KeypadCount {
    /// Keystrokes per character.
    pub fn kspc(&self) -> f64 {
        self.presses as f64 / self.chars.max(1) as f64
    }

    /// Share of the words offered first.
    pub fn first_rate(&self) -> f64 {
        self.first as f64 / self.words.max(1) as f64
    }

    /// The JSON object of these figures.
    pub fn to_json(&self) -> serde_json::Value {
        serde_json::json!({
            "words": self.words,
            "first": self.first,
            "first_rate": self.first_rate(),
            "listed": self.listed,
            "presses": self.presses,
            "chars": self.chars,
            "kspc": self.kspc(),
        })
    }

    /// Counts one word given its place in the list offered (`None`: not offered).
    fn word(&mut self, word: &[u8], place: Option<usize>) {
        self.words += 1;
        self.presses += match place {
            Some(rank) => {
                self.listed += 1;
                if rank == 0 {
                    self.first += 1;
                }
                word.len() + rank
            }
            None => multi_tap_presses(word) + 2,
        };
    }
}

/// The E.161 key of an ASCII letter (either case).
fn key_of(letter: u8) -> Option<u8> {
    let lower = letter.to_ascii_lowercase();
    (b'2'..=b'9').find(|&k| KeyMap::E161.letters(k).is_some_and(|s| s.contains(lower)))
}

/// The digits of `word`, if every byte is an ASCII letter.
pub fn digits_of(word: &[u8]) -> Option<Vec<u8>> {
    word.iter().map(|&b| key_of(b)).collect()
}

/// Presses to spell `word` by multi-tap: each letter's place on its key (1 for the first).
fn multi_tap_presses(word: &[u8]) -> usize {
    word.iter()
        .filter_map(|&b| {
            let lower = b.to_ascii_lowercase();
            let set = KeyMap::E161.letters(key_of(b)?)?;
            // The key's set holds both cases; the place counts its lower-case letters.
            set.iter()
                .filter(u8::is_ascii_lowercase)
                .position(|l| l == lower)
                .map(|p| p + 1)
        })
        .sum()
}

fn place_of(word: &[u8], offered: &[Vec<u8>]) -> Option<usize> {
    offered.iter().position(|w| w.eq_ignore_ascii_case(word))
}

/// The words of `text` with what is typed between them: `(start, end)` of each word.
fn words(text: &[u8]) -> impl Iterator<Item = (usize, usize)> + '_ {
    let mut at = 0;
    std::iter::from_fn(move || {
        while at < text.len() && is_boundary(text[at]) {
            at += 1;
        }
        if at >= text.len() {
            return None;
        }
        let start = at;
        while at < text.len() && !is_boundary(text[at]) {
            at += 1;
        }
        Some((start, at))
    })
}

/// 12-key entry of `text` with the model (each word's digits searched after the text before
/// it, with the step budget, margin and word lists of `search`, [`OFFERED`] wide) and with
/// `baseline`'s frequency-ordered dictionary; `progress` hears how many bytes are done.
pub fn keypad_entry(
    weights: &dyn Weights,
    baseline: &FrequencyBaseline,
    text: &[u8],
    search: SearchOptions<'_>,
    mut progress: impl FnMut(usize),
) -> Result<(KeypadCount, KeypadCount), Error> {
    let mut memory = session_memory(weights.dims(), OFFERED);
    let mut session = memory.session::<_, OFFERED, DEFAULT_HISTORY>(weights)?;
    let dictionary = baseline.by_digits(digits_of);
    let mut model = KeypadCount {
        chars: text.len(),
        ..KeypadCount::default()
    };
    let mut frequency = model;
    let mut done = 0;
    for (start, end) in words(text) {
        for &b in &text[done..start] {
            session.push(b)?;
        }
        let word = &text[start..end];
        let boundaries = start - done;
        model.presses += boundaries;
        frequency.presses += boundaries;
        match digits_of(word).filter(|_| word.len() <= MAX_WORD_LEN) {
            Some(digits) => {
                let options = SearchOptions {
                    width: OFFERED,
                    ..search
                };
                let found = session.keys(&digits, &KeyMap::E161, &options)?;
                let offered: Vec<Vec<u8>> = found.list.iter().map(|s| s.text.to_vec()).collect();
                model.word(word, place_of(word, &offered));
                let listed = dictionary.get(&digits).map_or(&[][..], |v| &v[..]);
                let top: Vec<Vec<u8>> = listed.iter().take(OFFERED).cloned().collect();
                frequency.word(word, place_of(word, &top));
            }
            None => {
                // Not a letter word: typed byte by byte.
                model.presses += word.len();
                frequency.presses += word.len();
            }
        }
        // Past its word capacity the session refuses bytes; the context goes on without them.
        for &b in word.iter().take(MAX_WORD_LEN) {
            session.push(b)?;
        }
        done = end;
        progress(done);
    }
    let tail = text.len() - done;
    model.presses += tail;
    frequency.presses += tail;
    Ok((model, frequency))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn digits_follow_e161() {
        // ITU-T E.161 letter assignment: 2 abc, 3 def, 4 ghi, 5 jkl, 6 mno, 7 pqrs, 8 tuv,
        // 9 wxyz.
        assert_eq!(digits_of(b"Home").unwrap(), b"4663");
        assert_eq!(digits_of(b"quiz").unwrap(), b"7849");
        assert!(digits_of(b"it's").is_none());
    }

    #[test]
    fn multi_tap_counts_the_place_on_the_key() {
        // c = 3 presses of 2, a = 1, b = 2; s = 4 presses of 7.
        assert_eq!(multi_tap_presses(b"cab"), 6);
        assert_eq!(multi_tap_presses(b"s"), 4);
    }

    #[test]
    fn kspc_of_a_word_offered_second() {
        // "good" (4 letters) offered second: 4 digits + 1 next press; with the space after
        // it, 6 presses for 5 characters.
        let mut k = KeypadCount {
            chars: 5,
            presses: 1,
            ..KeypadCount::default()
        };
        k.word(b"good", Some(1));
        assert_eq!(k.presses, 6);
        assert!((k.kspc() - 1.2).abs() < 1e-12);
        assert_eq!((k.first, k.listed), (0, 1));
    }
}
