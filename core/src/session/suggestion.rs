//! What a search is asked for and what it gives back.

use super::word_buffer::Word;
use super::word_list::WordFilter;
use crate::user_memory::CacheBlend;

/// The default bound on engine steps per search (see [`SearchOptions::max_steps`]).
///
/// ```
/// assert_eq!(inkling_core::session::DEFAULT_MAX_STEPS, 256);
/// ```
pub const DEFAULT_MAX_STEPS: usize = 256;

/// The default margin of a search, in nats (see [`SearchOptions::margin`]): a continuation
/// more than about 4.5 times less likely than the best one (e^1.5) is not followed. Chosen
/// on the demo model's scenario text: against following every candidate it takes 2.5 times
/// fewer engine steps per keystroke for 0.6 to 0.7 points of keystroke savings (see the
/// README).
///
/// ```
/// assert_eq!(inkling_core::session::DEFAULT_MARGIN, 1.5);
/// ```
pub const DEFAULT_MARGIN: f32 = 1.5;

/// How a completion search runs.
///
/// ```
/// use inkling_core::session::{SearchOptions, WordFilter, DEFAULT_MAX_STEPS};
/// let options = SearchOptions::new(3);
/// assert_eq!(options.max_steps, DEFAULT_MAX_STEPS);
/// let strict = SearchOptions { max_steps: 40, ..options };
/// # let _ = strict;
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SearchOptions<'a> {
    /// Beams kept and results returned (at most the session's `K`; 0 gives no results).
    pub width: usize,
    /// Engine steps the search may take. When reached, the search stops and returns what it
    /// has, with [`Suggestions::cut_short`] set. This bounds the latency per keystroke.
    pub max_steps: usize,
    /// How far below the best a word may score and still be followed, in nats (natural-log
    /// probability): a candidate more than `margin` below the best candidate of its round,
    /// or below the best finished word, is not stepped. Smaller is faster and offers fewer
    /// unlikely words; `f32::INFINITY` follows every candidate that could still enter the
    /// results. On 12-key entry ([`Session::keys`](super::Session::keys)) the first rule
    /// allows four times the margin: there a likely prefix says less of a word of exactly
    /// the keys' length.
    pub margin: f32,
    /// Words never offered, and optionally the only words offered.
    pub filter: WordFilter<'a>,
    /// The user memory to blend with the model as a cache model (see
    /// [`cache_blend`](crate::user_memory::cache_blend)); `None` gives the model's
    /// suggestions alone, exactly as before there was a memory. 12-key entry
    /// ([`Session::keys`](super::Session::keys)) blends in the learned words that fit the
    /// keys (its cache is those words) and offers no phrases.
    pub memory: Option<CacheBlend<'a>>,
}

impl SearchOptions<'static> {
    /// `width` beams, [`DEFAULT_MAX_STEPS`], [`DEFAULT_MARGIN`], no word lists, no memory.
    ///
    /// ```
    /// let options = inkling_core::session::SearchOptions::new(4);
    /// assert!(options.width == 4 && options.filter.lexicon.is_none() && options.memory.is_none());
    /// ```
    pub const fn new(width: usize) -> Self {
        SearchOptions {
            width,
            max_steps: DEFAULT_MAX_STEPS,
            margin: DEFAULT_MARGIN,
            filter: WordFilter {
                deny: super::word_list::WordList::EMPTY,
                lexicon: None,
            },
            memory: None,
        }
    }
}

/// One completion: a whole word and how likely the model finds it.
///
/// ```
/// use inkling_core::session::{Suggestion, Word};
/// let s = Suggestion { text: Word::from_slice(b"the").unwrap(), logprob: -1.5, finished: true };
/// assert_eq!(s.text.as_slice(), b"the");
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct Suggestion {
    /// The whole word: the bytes already typed followed by the completion (no boundary byte).
    pub text: Word,
    /// Sum of the natural-log probabilities of the completion's bytes given the text before
    /// it; for a finished word it includes the word boundary byte that ends it. With a
    /// [memory](SearchOptions::memory) that holds a word starting with the typed part, the
    /// natural log of the blended probability instead (see
    /// [`cache_blend`](crate::user_memory::cache_blend)).
    pub logprob: f32,
    /// Whether the word ended (a boundary byte followed it; a word from the user memory is a
    /// whole word); `false` for a beam the search stopped before it ended (step budget, or
    /// nothing better left).
    pub finished: bool,
}

/// The result of a search: up to `K` suggestions, best first, distinct texts.
///
/// ```
/// use inkling_core::session::Suggestions;
/// let none = Suggestions::<3>::default();
/// assert!(none.list.is_empty() && !none.cut_short && none.steps == 0 && none.phrase.is_none());
/// ```
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Suggestions<const K: usize> {
    /// Finished words best first, then (only if fewer than the width were found)
    /// unfinished ones best first.
    pub list: heapless::Vec<Suggestion, K>,
    /// Engine steps the search took.
    pub steps: usize,
    /// Whether the step budget stopped the search.
    pub cut_short: bool,
    /// A phrase from the user memory that the model verified (see
    /// [`draft`](super::draft)); it takes the last of the `width` places, so `list` then
    /// holds at most `width − 1` words. Always `None` without a memory holding phrases.
    pub phrase: Option<super::draft::Phrase>,
}
