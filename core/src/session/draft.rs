//! Phrase completion by draft and verify.
//!
//! When the text typed matches the start of a phrase of the user memory (see
//! [`learned_phrases`](crate::user_memory::learned_phrases)), the rest of the phrase is a
//! *draft* that the byte model verifies, as in speculative decoding (Leviathan, Kalman &
//! Matias 2023, "Fast Inference from Transformers via Speculative Decoding", ICML; there a
//! small model drafts and the large one checks all drafted tokens in one parallel pass).
//! Here the memory drafts and the model checks every drafted byte in one chunked prefill
//! ([`prefill_checked`](crate::engine::recurrence::prefill_checked)), which gives the
//! logits at each drafted position. Ours is the greedy **top-k acceptance** variant, not
//! the paper's rejection sampling: a drafted byte is accepted when it is among the model's
//! `k` likeliest next bytes at its position ([`in_top_k`]), and the draft is accepted up to
//! its first byte that is not (the longest prefix whose every byte passes). The accepted
//! part is then cut back to the end of a word ([`word_end_within`]); if that covers at
//! least one word after the one being typed, it is offered as one suggestion
//! ([`Suggestions::phrase`](crate::session::Suggestions::phrase)).
//!
//! **Choosing the draft** ([`choose_draft`]). Every word start of every phrase is an
//! anchor: the phrase matches there when its rest from the anchor starts with the word
//! typed so far and goes on past that word. A match has context when the word of the phrase
//! before the anchor equals the word typed before the current word (with the boundary bytes
//! between them). Matches with context outrank those without; then the longer draft wins,
//! then the phrase's count and its recency; the first phrase wins ties. A match with no
//! context and nothing typed of the word is not taken (it would offer some phrase at every
//! word start). One draft per search. (Counting more words of context, or asking a phrase
//! without context for a count of 2 or two letters typed, did worse on the training texts:
//! see the DEVELOPERS notes.)
//!
//! **The slot it takes.** A phrase takes the last of the search's `width` places: when one
//! is offered, [`Suggestions::list`](crate::session::Suggestions::list) holds at most
//! `width − 1` words (the least likely word gives way). Without phrases (no memory, or a
//! memory with none) nothing changes.
//!
//! **Cost.** The verification runs after the word search, on the first beam slot (a copy
//! of the state after the text), in passes of the scratch's
//! [chunk capacity](crate::Scratch::chunk_capacity) (the state in 16-bit floats is
//! rounded at the end of each pass, not after every byte as when typing), and takes one
//! engine step per drafted byte fed, within
//! [`SearchOptions::max_steps`](crate::session::SearchOptions::max_steps) (a draft is cut
//! to fit what is left). A [`refine`](crate::session::Session::refine) call whose budget
//! the draft would pass waits for the next call; a call that starts with the draft runs it
//! whole, up to [`MAX_PHRASE_LEN`] − 1 steps, whatever its budget.

use super::word_boundary::is_boundary;
use crate::user_memory::learned_phrases::{LearnedPhrase, MAX_PHRASE_LEN};

/// A phrase suggestion: the word typed so far and the words after it, as one text.
///
/// ```
/// use inkling_core::session::draft::Phrase;
/// let p = Phrase { text: heapless::Vec::from_slice(b"booked for tonight").unwrap(), logprob: -0.7 };
/// assert!(p.text.starts_with(b"boo"));
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Phrase {
    /// The whole text from the start of the current word (the typed part included), ending
    /// at the end of a word (no boundary after it).
    pub text: heapless::Vec<u8, MAX_PHRASE_LEN>,
    /// Sum of the natural-log probabilities the model gives the drafted bytes taken.
    pub logprob: f32,
}

/// A draft chosen from the phrases: the phrase's text from its anchor on, of which the
/// first `typed` bytes are the word typed so far.
///
/// ```
/// use inkling_core::session::{draft::choose_draft, WordList};
/// use inkling_core::user_memory::UserMemory;
/// let mut memory = UserMemory::<8, 8>::new();
/// memory.learn_text(b"booked for tonight", &WordList::EMPTY);
/// let draft = choose_draft(memory.phrases(), b"2 ", b"bo").unwrap();
/// assert_eq!((draft.rest(), draft.typed()), (&b"oked for tonight"[..], 2));
/// ```
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Draft {
    text: heapless::Vec<u8, MAX_PHRASE_LEN>,
    typed: usize,
}

impl Draft {
    /// The drafted bytes: the phrase after the word typed so far.
    ///
    /// ```
    /// # use inkling_core::session::{draft::choose_draft, WordList};
    /// # use inkling_core::user_memory::UserMemory;
    /// let mut memory = UserMemory::<8, 8>::new();
    /// memory.learn_text(b"thick fog", &WordList::EMPTY);
    /// assert_eq!(choose_draft(memory.phrases(), b"", b"th").unwrap().rest(), b"ick fog");
    /// ```
    pub fn rest(&self) -> &[u8] {
        self.text.get(self.typed..).unwrap_or(&[])
    }

    /// Bytes of the word typed so far at the start of the draft's text.
    ///
    /// ```
    /// # use inkling_core::session::{draft::choose_draft, WordList};
    /// # use inkling_core::user_memory::UserMemory;
    /// let mut memory = UserMemory::<8, 8>::new();
    /// memory.learn_text(b"thick fog", &WordList::EMPTY);
    /// assert_eq!(choose_draft(memory.phrases(), b"", b"th").unwrap().typed(), 2);
    /// ```
    pub fn typed(&self) -> usize {
        self.typed
    }

    /// The phrase suggestion of the draft's first `len` drafted bytes with log-probability
    /// `logprob`.
    pub(crate) fn phrase(&self, len: usize, logprob: f32) -> Phrase {
        let text = self.text.get(..self.typed + len).unwrap_or(&[]);
        Phrase {
            text: heapless::Vec::from_slice(text).unwrap_or_default(),
            logprob,
        }
    }
}

/// The draft for the word `word` typed after the text `before` (the text before the word,
/// of which only the end matters), chosen among `phrases` as the [module docs](self) say;
/// `None` if no phrase matches.
///
/// ```
/// use inkling_core::session::{draft::choose_draft, WordList};
/// use inkling_core::user_memory::UserMemory;
/// let mut memory = UserMemory::<16, 8>::new();
/// memory.learn_text(b"Thick fog at Lunder Ford.", &WordList::EMPTY);
/// // After "Thick fog ", "Thick fog at Lunder" and "fog at Lunder Ford" both have context
/// // ("fog"): the longer draft wins.
/// let draft = choose_draft(memory.phrases(), b"Thick fog ", b"").unwrap();
/// assert_eq!(draft.rest(), b"at Lunder Ford");
/// // Nothing typed of the word and no context: no draft.
/// assert!(choose_draft(memory.phrases(), b"Heavy rain. ", b"").is_none());
/// ```
pub fn choose_draft(phrases: &[LearnedPhrase], before: &[u8], word: &[u8]) -> Option<Draft> {
    let mut best: Option<(Rank, &[u8])> = None;
    for phrase in phrases {
        let text = phrase.text();
        for anchor in 0..text.len() {
            let starts_word = anchor == 0
                || text.get(anchor - 1).is_some_and(|&b| {
                    is_boundary(b) && text.get(anchor).is_some_and(|&c| !is_boundary(c))
                });
            if !starts_word {
                continue;
            }
            let from = text.get(anchor..).unwrap_or(&[]);
            if !from.starts_with(word) || !goes_past_word(from.get(word.len()..).unwrap_or(&[])) {
                continue;
            }
            let context = context_words(text.get(..anchor).unwrap_or(&[]), before);
            if context == 0 && word.is_empty() {
                continue;
            }
            let rank = Rank {
                context: context.min(1),
                len: from.len(),
                count: phrase.count(),
                last_used: phrase.last_used(),
            };
            if best.as_ref().is_none_or(|(b, _)| rank > *b) {
                best = Some((rank, from));
            }
        }
    }
    let (_, from) = best?;
    Some(Draft {
        text: heapless::Vec::from_slice(from).ok()?,
        typed: word.len(),
    })
}

/// How a match ranks, field by field (the derived order compares them in turn).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
struct Rank {
    context: usize,
    len: usize,
    count: u16,
    last_used: u32,
}

/// Whether the rest of a phrase after the typed part goes on past the current word: a
/// boundary, then a word byte.
fn goes_past_word(rest: &[u8]) -> bool {
    rest.iter()
        .position(|&b| is_boundary(b))
        .and_then(|at| rest.get(at..))
        .is_some_and(|tail| tail.iter().any(|&b| !is_boundary(b)))
}

/// How many whole words at the end of `head` (the phrase before its anchor) equal the end
/// of `before`, byte for byte with the boundaries between them.
fn context_words(head: &[u8], before: &[u8]) -> usize {
    let common = head
        .iter()
        .rev()
        .zip(before.iter().rev())
        .take_while(|(a, b)| a == b)
        .count();
    let matched = head.get(head.len() - common..).unwrap_or(&[]);
    // Words wholly inside the match: a word counts if its first byte is matched and the
    // byte before it (in the phrase) is a boundary or the phrase's start; at the phrase's
    // start the text typed must have a boundary (or nothing) there too.
    let mut words = 0;
    for (i, &b) in matched.iter().enumerate() {
        let at = head.len() - common + i;
        if is_boundary(b) {
            continue;
        }
        let starts = if at == 0 {
            before
                .len()
                .checked_sub(common + 1)
                .and_then(|j| before.get(j))
                .is_none_or(|&p| is_boundary(p))
        } else {
            i > 0 && head.get(at - 1).is_some_and(|&p| is_boundary(p))
        };
        if starts {
            words += 1;
        }
    }
    words
}

/// Whether `byte` is among the `k` likeliest bytes of `logits`: fewer than `k` bytes have a
/// larger logit (so bytes tied with it do not push it out). `k = 0` accepts nothing.
///
/// ```
/// use inkling_core::session::draft::in_top_k;
/// let mut logits = [0.0f32; 256];
/// logits[b'a' as usize] = 3.0;
/// logits[b'b' as usize] = 2.0;
/// logits[b'c' as usize] = 1.0;
/// assert!(in_top_k(&logits, b'b', 2) && !in_top_k(&logits, b'c', 2));
/// ```
pub fn in_top_k(logits: &[f32], byte: u8, k: usize) -> bool {
    let Some(&own) = logits.get(usize::from(byte)) else {
        return false;
    };
    logits.iter().filter(|&&l| l > own).count() < k
}

/// Where an accepted draft is cut: the longest part of `rest[..accepted]` that ends at the
/// end of a word (the whole of `rest` if all of it was accepted, else just before an
/// accepted boundary byte that follows a word byte), if that part reaches past the word
/// being typed; `None` otherwise.
///
/// ```
/// use inkling_core::session::draft::word_end_within;
/// let rest = b"ked for tonight";
/// assert_eq!(word_end_within(rest, rest.len()), Some(rest.len()));
/// assert_eq!(word_end_within(rest, 12), Some(7)); // "ked for" (the space after it accepted)
/// assert_eq!(word_end_within(rest, 7), None); // "ked" and "for" without its space: one word
/// ```
pub fn word_end_within(rest: &[u8], accepted: usize) -> Option<usize> {
    let end = if accepted >= rest.len() {
        rest.len()
    } else {
        (1..accepted).rev().find(|&e| {
            rest.get(e).is_some_and(|&b| is_boundary(b))
                && rest.get(e - 1).is_some_and(|&b| !is_boundary(b))
        })?
    };
    let part = rest.get(..end)?;
    let first_gap = part.iter().position(|&b| is_boundary(b))?;
    part.get(first_gap..)?
        .iter()
        .any(|&b| !is_boundary(b))
        .then_some(end)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::session::WordList;
    use crate::user_memory::UserMemory;

    #[test]
    fn the_top_k_rule_counts_strictly_larger_logits() {
        // Hand-worked: logits a 3, b 2, c 2, d 1, the rest 0. Larger than b: one (a), so b
        // is in the top 2; c ties b and is in too; d has three larger: in the top 4, not 3.
        let mut l = [0.0f32; 256];
        for (b, v) in [(b'a', 3.0), (b'b', 2.0), (b'c', 2.0), (b'd', 1.0)] {
            l[b as usize] = v;
        }
        assert!(in_top_k(&l, b'a', 1) && !in_top_k(&l, b'b', 1));
        assert!(in_top_k(&l, b'b', 2) && in_top_k(&l, b'c', 2));
        assert!(!in_top_k(&l, b'd', 3) && in_top_k(&l, b'd', 4));
        assert!(!in_top_k(&l, b'a', 0));
    }

    #[test]
    fn context_outranks_length_and_needs_whole_words() {
        let mut m = UserMemory::<16, 16>::new();
        m.learn_text(
            b"Thick fog at Lunder Ford. Waiting at Cassby Hut since noon.",
            &WordList::EMPTY,
        );
        // "a" after "Thick fog ": "fog at Lunder Ford" has context, "at Cassby Hut since"
        // is longer but has none.
        let d = choose_draft(m.phrases(), b"Thick fog ", b"a").unwrap();
        assert_eq!(d.rest(), b"t Lunder Ford");
        // Without context anywhere, the longest draft.
        let d = choose_draft(m.phrases(), b"Heavy rain ", b"a").unwrap();
        assert_eq!(d.rest(), b"t Cassby Hut since");
        // "2" of "12" is not a whole word.
        assert_eq!(context_words(b"x 2 ", b"12 "), 0);
        assert_eq!(context_words(b"x 2 ", b"a 2 "), 1);
        assert_eq!(context_words(b"2 ", b"2 "), 1);
    }
}
