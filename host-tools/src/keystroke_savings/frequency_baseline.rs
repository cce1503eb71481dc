//! The baseline predictor: the most frequent words of a corpus that fit the typed prefix.

use std::collections::HashMap;
use std::convert::Infallible;

use inkling_core::session::is_boundary;

use super::simulation::Predictor;

/// The words of a corpus with their counts, sorted bytewise for prefix look-ups. It offers the
/// `count` most frequent words that start with the typed prefix (ties: bytewise order), and
/// ignores the context before the word: a unigram word list, the usual floor a model must beat.
#[derive(Debug, Clone)]
pub struct FrequencyBaseline {
    /// `(word, count)`, sorted by word.
    words: Vec<(Vec<u8>, u64)>,
}

impl FrequencyBaseline {
    /// Counts the words of `corpus`, split at [word boundaries](is_boundary) as the session
    /// splits them, case kept.
    pub fn from_corpus(corpus: &[u8]) -> Self {
        let mut counts: HashMap<&[u8], u64> = HashMap::new();
        for word in corpus.split(|&b| is_boundary(b)).filter(|w| !w.is_empty()) {
            *counts.entry(word).or_default() += 1;
        }
        let mut words: Vec<(Vec<u8>, u64)> =
            counts.into_iter().map(|(w, c)| (w.to_vec(), c)).collect();
        words.sort_unstable();
        FrequencyBaseline { words }
    }

    /// How many distinct words the corpus has.
    pub fn distinct_words(&self) -> usize {
        self.words.len()
    }

    /// A 12-key dictionary: for each key sequence (as `digits` gives it for a word, `None`
    /// for words it cannot spell), the corpus's words on it in lower case, counts of all
    /// cases summed, most frequent first (ties: bytewise order).
    pub fn by_digits(
        &self,
        digits: impl Fn(&[u8]) -> Option<Vec<u8>>,
    ) -> HashMap<Vec<u8>, Vec<Vec<u8>>> {
        let mut lower: HashMap<Vec<u8>, u64> = HashMap::new();
        for (w, c) in &self.words {
            *lower.entry(w.to_ascii_lowercase()).or_default() += c;
        }
        let mut ranked: Vec<(Vec<u8>, u64)> = lower.into_iter().collect();
        ranked.sort_unstable_by(|a, b| b.1.cmp(&a.1).then_with(|| a.0.cmp(&b.0)));
        let mut by: HashMap<Vec<u8>, Vec<Vec<u8>>> = HashMap::new();
        for (w, _) in ranked {
            if let Some(d) = digits(&w) {
                by.entry(d).or_default().push(w);
            }
        }
        by
    }

    /// The `count` most frequent words starting with `prefix`, most frequent first.
    pub fn most_frequent(&self, prefix: &[u8], count: usize) -> Vec<Vec<u8>> {
        let start = self.words.partition_point(|(w, _)| w.as_slice() < prefix);
        let len = self.words[start..].partition_point(|(w, _)| w.starts_with(prefix));
        let mut best: Vec<&(Vec<u8>, u64)> = Vec::with_capacity(count + 1);
        for entry in &self.words[start..start + len] {
            // Sorted by word already, so an equal count never displaces an earlier word.
            let place = best.partition_point(|b| b.1 >= entry.1);
            if place < count {
                best.insert(place, entry);
                best.truncate(count);
            }
        }
        best.into_iter().map(|(w, _)| w.clone()).collect()
    }
}

impl Predictor for FrequencyBaseline {
    type Error = Infallible;

    fn push(&mut self, _byte: u8) -> Result<(), Infallible> {
        Ok(())
    }

    fn offer(&mut self, prefix: &[u8], count: usize) -> Result<Vec<Vec<u8>>, Infallible> {
        Ok(self.most_frequent(prefix, count))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn most_frequent_words_of_a_prefix_in_count_then_byte_order() {
        let b = FrequencyBaseline::from_corpus(b"to the top, the tea; The tea. tent to to\n");
        assert_eq!(b.distinct_words(), 6);
        assert_eq!(b.most_frequent(b"t", 2), [b"to".to_vec(), b"tea".to_vec()]);
        assert_eq!(
            b.most_frequent(b"te", 5),
            [b"tea".to_vec(), b"tent".to_vec()]
        );
        assert_eq!(b.most_frequent(b"T", 3), [b"The".to_vec()]);
        assert!(b.most_frequent(b"x", 3).is_empty());
        assert!(b.most_frequent(b"t", 0).is_empty());
    }
}
