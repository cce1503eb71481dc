//! The simulated writer of [the module docs](super) and the keys it presses.

use inkling_core::session::is_boundary;

/// Something that offers words while text is typed: the model's session, or a baseline.
pub trait Predictor {
    /// Why an offer or a byte failed.
    type Error;

    /// Takes one byte of the text (a word byte or a boundary).
    fn push(&mut self, byte: u8) -> Result<(), Self::Error>;

    /// Up to `count` whole words (the typed part included) offered after the bytes pushed so
    /// far; `prefix` is the part of the current word already pushed (empty at a word start).
    fn offer(&mut self, prefix: &[u8], count: usize) -> Result<Vec<Vec<u8>>, Self::Error>;
}

/// The keys of one simulated run.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct KeyCount {
    /// Bytes of the text: the keys typed letter by letter.
    pub bytes: usize,
    /// Keys with prediction, the selection key counted, no automatic space.
    pub keys: usize,
    /// Words in the text.
    pub words: usize,
    /// Words taken from a suggestion.
    pub taken: usize,
    /// Taken words that a space follows in the text.
    pub taken_before_space: usize,
    /// Of the words taken, phrase suggestions (several words taken with one key).
    pub phrases_taken: usize,
}

impl KeyCount {
    /// Keys with prediction under one framing (see [the module docs](super)).
    pub fn with_prediction(&self, selection_counts: bool, auto_space: bool) -> usize {
        let mut keys = self.keys;
        if auto_space {
            // A space saved after each taken word the text follows with one, a backspace
            // spent (deleting the inserted space) after every other taken word.
            keys = keys + (self.taken - self.taken_before_space) - self.taken_before_space;
        }
        if !selection_counts {
            keys -= self.taken;
        }
        keys
    }

    /// Keystroke savings under one framing, as a fraction (0 for an empty text).
    pub fn savings(&self, selection_counts: bool, auto_space: bool) -> f64 {
        if self.bytes == 0 {
            return 0.0;
        }
        let saved = self.bytes as f64 - self.with_prediction(selection_counts, auto_space) as f64;
        saved / self.bytes as f64
    }
}

/// One look at the suggestions by the simulated writer.
#[derive(Debug)]
pub struct Offer<'a> {
    /// The text entered so far (all bytes before this look).
    pub typed: &'a [u8],
    /// The word the writer is typing.
    pub word: &'a [u8],
    /// The words offered.
    pub words: &'a [Vec<u8>],
    /// Which of them was taken, if one was the word.
    pub taken: Option<usize>,
}

/// Types `text` through `predictor` with `count` suggestions and counts the keys.
pub fn simulate<P: Predictor>(
    text: &[u8],
    count: usize,
    predictor: &mut P,
) -> Result<KeyCount, P::Error> {
    simulate_with(text, count, predictor, |_| {})
}

/// [`simulate`], showing every look at the suggestions to `watch` (for the demo).
pub fn simulate_with<P: Predictor>(
    text: &[u8],
    count: usize,
    predictor: &mut P,
    mut watch: impl FnMut(&Offer<'_>),
) -> Result<KeyCount, P::Error> {
    let mut keys = KeyCount {
        bytes: text.len(),
        ..KeyCount::default()
    };
    let mut at = 0;
    while at < text.len() {
        if is_boundary(text[at]) {
            predictor.push(text[at])?;
            keys.keys += 1;
            at += 1;
            continue;
        }
        let len = text[at..]
            .iter()
            .position(|&b| is_boundary(b))
            .unwrap_or(text.len() - at);
        let word = &text[at..at + len];
        keys.words += 1;
        let mut typed = 0;
        let mut took = len;
        while typed < len {
            let words = predictor.offer(&word[..typed], count)?;
            let taken = longest_fit(&text[at..], &words);
            watch(&Offer {
                typed: &text[..at + typed],
                word,
                words: &words,
                taken,
            });
            if let Some(i) = taken {
                took = words[i].len();
                break;
            }
            predictor.push(word[typed])?;
            typed += 1;
        }
        if typed < len {
            // Taken: one key, and the rest of the word (or phrase) is entered for the writer.
            let offered = &text[at..at + took];
            keys.keys += typed + 1;
            keys.taken += 1;
            let more_words = word_starts(offered) - 1;
            keys.words += more_words;
            keys.phrases_taken += usize::from(more_words > 0);
            if text.get(at + took) == Some(&b' ') {
                keys.taken_before_space += 1;
            }
            offered[typed..]
                .iter()
                .try_for_each(|&b| predictor.push(b))?;
            at += took;
        } else {
            keys.keys += len;
            at += len;
        }
    }
    Ok(keys)
}

/// The longest of `offers` that `text` starts with and that ends where a word of `text`
/// ends (an offered word is so taken only if it is the whole word).
fn longest_fit(text: &[u8], offers: &[Vec<u8>]) -> Option<usize> {
    offers
        .iter()
        .enumerate()
        .filter(|(_, w)| {
            !w.is_empty()
                && text.starts_with(w)
                && text.get(w.len()).is_none_or(|&b| is_boundary(b))
        })
        .max_by_key(|(i, w)| (w.len(), usize::MAX - i))
        .map(|(i, _)| i)
}

/// Words of `text` (word bytes after a boundary or at the start).
fn word_starts(text: &[u8]) -> usize {
    (0..text.len())
        .filter(|&i| !is_boundary(text[i]) && (i == 0 || is_boundary(text[i - 1])))
        .count()
}

/// The first `max_bytes` bytes of `text`, shortened to end at a word boundary so that no word
/// is cut (unless the first word alone is longer).
pub fn whole_words(text: &[u8], max_bytes: usize) -> &[u8] {
    if text.len() <= max_bytes {
        return text;
    }
    let cut = &text[..max_bytes];
    if is_boundary(text[max_bytes]) {
        return cut;
    }
    match cut.iter().rposition(|&b| is_boundary(b)) {
        Some(end) => &cut[..=end],
        None => cut,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Offers a fixed list of words, whatever the prefix: enough to count keys by hand.
    struct Fixed(Vec<Vec<u8>>);

    impl Predictor for Fixed {
        type Error = ();
        fn push(&mut self, _: u8) -> Result<(), ()> {
            Ok(())
        }
        fn offer(&mut self, _: &[u8], count: usize) -> Result<Vec<Vec<u8>>, ()> {
            Ok(self.0.iter().take(count).cloned().collect())
        }
    }

    #[test]
    fn a_word_offered_from_its_start_costs_one_key() {
        // "go go." letter by letter: 6 keys. Both "go" are taken at their first look (1 key
        // each), then " " and "." are typed: 4 keys, KS = 2/6 (the definition of Trnka &
        // McCoy 2008). With an automatic space: the first "go" saves the space (-1), the
        // second is followed by "." so its inserted space is deleted (+1): still 4 keys.
        let keys = simulate(b"go go.", 3, &mut Fixed(vec![b"go".to_vec()])).unwrap();
        assert_eq!(
            keys,
            KeyCount {
                bytes: 6,
                keys: 4,
                words: 2,
                taken: 2,
                taken_before_space: 1,
                phrases_taken: 0,
            }
        );
        assert_eq!(keys.with_prediction(true, true), 4);
        assert_eq!(keys.with_prediction(false, false), 2);
        assert!((keys.savings(true, false) - 2.0 / 6.0).abs() < 1e-12);
    }

    #[test]
    fn a_phrase_is_taken_with_one_key_when_the_text_goes_on_with_it() {
        // "go up the hill." letter by letter: 15 keys. The phrase "go up the hill" is
        // offered from the start: 1 key, then "." typed: 2 keys, 4 words, one taken.
        // "go up the" alone would also fit; the longest is taken. "go up thehill" does not
        // end where a word ends and is never taken.
        let offers = vec![
            b"go up thehill".to_vec(),
            b"go up the".to_vec(),
            b"go up the hill".to_vec(),
        ];
        let keys = simulate(b"go up the hill.", 3, &mut Fixed(offers)).unwrap();
        assert_eq!(
            (
                keys.bytes,
                keys.keys,
                keys.words,
                keys.taken,
                keys.phrases_taken
            ),
            (15, 2, 4, 1, 1)
        );
    }

    #[test]
    fn no_count_no_offer() {
        let keys = simulate(b"go go.", 0, &mut Fixed(vec![b"go".to_vec()])).unwrap();
        assert_eq!((keys.keys, keys.taken), (6, 0));
        assert_eq!(keys.savings(true, false), 0.0);
    }

    #[test]
    fn whole_words_never_cuts_a_word() {
        assert_eq!(whole_words(b"ab cd ef", 4), b"ab ");
        assert_eq!(whole_words(b"ab cd ef", 5), b"ab cd");
        assert_eq!(whole_words(b"ab cd ef", 6), b"ab cd ");
        assert_eq!(whole_words(b"abcdef", 3), b"abc");
        assert_eq!(whole_words(b"ab", 9), b"ab");
    }
}
