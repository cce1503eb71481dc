//! The cache model: the model's word probability blended with the user memory's.
//!
//! **The interpolation** (Kuhn & De Mori 1990, "A Cache-Based Natural Language Model for
//! Speech Recognition", IEEE TPAMI 12(6), eq. of the combined model: a weighted sum of the
//! static model and a cache of the words recently used), applied here to the words that
//! start with what is typed of the current word, `p` (empty at a word start):
//!
//! ```text
//! P(w | h, p) = (1 − λ) · P_model(w | h, p) + λ · P_cache(w | p)
//! P_cache(w | p) = c(w) / Σ c(v)   over the learned words v that start with p (p itself included)
//! ```
//!
//! - `P_model(w | h, p)` is the probability the byte model gives the rest of `w` and a word
//!   boundary after it, given the text `h` before it and the typed part `p` (the
//!   [`logprob`](crate::session::Suggestion::logprob) of a finished word, exponentiated);
//! - `c(w)` is the word's [count](crate::user_memory::LearnedWord::count) in the memory (0 if
//!   it is not there);
//! - `λ` is [`CacheBlend::weight`]; both distributions are conditioned on the same typed
//!   part, so their blend is one too, and no probability of `p` itself is needed.
//!
//! On 12-key entry the cache is the learned words whose rest after `p` fits the keys
//! pressed (one letter of each key in turn, then the end of the word), and `Σ c(v)` runs
//! over them.
//!
//! When no learned word starts with `p` the cache distribution is undefined and the model
//! alone is used: the suggestions are exactly those of a search without the memory. The
//! search reports `ln P(w | h, p)` as the suggestion's `logprob` and ranks by it.
//!
//! **Learned words the search did not reach.** The beam search finds the model's best
//! words; a learned word it did not finish gets its model probability by stepping the
//! model through its remaining bytes from the state after the text (one engine step per
//! byte, the same operations as the search, so the same bits), within the search's step
//! budget ([`SearchOptions::max_steps`](crate::session::SearchOptions::max_steps)). At most
//! `width` learned words are scored, those with the largest cache probability (the most
//! recently used first among equals). A learned word left unscored when the budget runs out
//! counts with `P_model = 0`, its smallest possible blend, `λ · P_cache`.

use super::learned_phrases::LearnedPhrase;
use super::learned_words::{count_in, LearnedWord, UserMemory};

/// The cache weight `λ` to use unless told otherwise. Chosen on training texts only (the
/// first 10,000 bytes of the scenario's training messages and of its logbook training
/// text; demo model, 3 suggestions, a memory starting empty): among 0.1 to 0.7 in steps of
/// 0.1, the weight with the largest gain on the logbook (where names and phrases repeat)
/// that lowers nothing on the messages, whose words the model already knows (logbook 20.8%
/// → 35.4%, messages 53.1% → 53.2%; 0.5 and above cost the messages).
///
/// ```
/// assert_eq!(inkling_core::user_memory::DEFAULT_CACHE_WEIGHT, 0.4);
/// ```
pub const DEFAULT_CACHE_WEIGHT: f32 = 0.4;

/// The user memory as a search sees it: its words and the weight `λ` of the cache model
/// (see the [module docs](self)). A weight outside `0..=1` (or NaN) is taken as the nearest
/// of 0 and 1 (NaN as 0).
///
/// ```
/// use inkling_core::session::{SearchOptions, WordList};
/// use inkling_core::user_memory::{CacheBlend, UserMemory};
/// let mut memory = UserMemory::<64>::new();
/// memory.learn_text(b"Greta Greta Grey", &WordList::EMPTY);
/// let blend = CacheBlend::new(&memory, 0.25);
/// assert_eq!(blend.cache_probability(b"Greta", b"Gr"), 2.0 / 3.0);
/// let options = SearchOptions { memory: Some(blend), ..SearchOptions::new(3) };
/// # let _ = options;
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CacheBlend<'a> {
    /// The learned words.
    pub words: &'a [LearnedWord],
    /// The cache weight `λ`, between 0 (the model alone) and 1 (the memory alone).
    pub weight: f32,
    /// The learned phrases a search may draft from (see
    /// [`draft`](crate::session::draft)); empty gives no phrase suggestion.
    pub phrases: &'a [LearnedPhrase],
    /// `k` of the drafts' acceptance rule: a drafted byte is accepted when it is among the
    /// model's `k` likeliest next bytes (0 accepts none).
    pub top_k: usize,
}

/// The `k` of a phrase draft's acceptance rule unless told otherwise (see
/// [`draft`](crate::session::draft)). Chosen on training texts only (the first 10,000
/// bytes of the scenario's training messages and of its logbook training text; demo
/// model, 3 suggestions, a memory starting empty, keystroke savings with learning):
///
/// | k | 2 | 4 | 8 | 16 |
/// |---|---|---|---|---|
/// | messages (53.2% with words alone) | 54.8% | 54.6% | 54.4% | 54.2% |
/// | logbook (35.4% with words alone) | 36.5% | 39.8% | 44.6% | 46.5% |
///
/// A larger k offers more phrases, right on the logbook, mostly not taken on the messages
/// (where each takes a word's place). 8 is the k with the largest sum of the two gains
/// among those keeping at least one point of gain on the messages (our rule; common
/// practice, no source).
///
/// ```
/// assert_eq!(inkling_core::user_memory::cache_blend::DEFAULT_DRAFT_TOP_K, 8);
/// ```
pub const DEFAULT_DRAFT_TOP_K: usize = 8;

impl<'a> CacheBlend<'a> {
    /// The words and phrases of `memory` with cache weight `weight` and
    /// [`DEFAULT_DRAFT_TOP_K`].
    ///
    /// ```
    /// use inkling_core::user_memory::{CacheBlend, UserMemory, DEFAULT_CACHE_WEIGHT};
    /// let memory = UserMemory::<8>::new();
    /// let blend = CacheBlend::new(&memory, DEFAULT_CACHE_WEIGHT);
    /// assert!(blend.words.is_empty());
    /// ```
    pub fn new<const N: usize, const P: usize>(memory: &'a UserMemory<N, P>, weight: f32) -> Self {
        CacheBlend {
            words: memory.words(),
            weight,
            phrases: memory.phrases(),
            top_k: DEFAULT_DRAFT_TOP_K,
        }
    }

    /// `λ` within `0..=1`.
    fn lambda(&self) -> f32 {
        if self.weight.is_nan() {
            0.0
        } else {
            self.weight.clamp(0.0, 1.0)
        }
    }

    /// `Σ c(v)` over the learned words that start with `prefix`: the denominator of
    /// `P_cache(· | prefix)` (0 when none does).
    ///
    /// ```
    /// # use inkling_core::{user_memory::{CacheBlend, UserMemory}, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn_text(b"hut hut hurry base", &WordList::EMPTY);
    /// let blend = CacheBlend::new(&memory, 0.3);
    /// assert_eq!((blend.prefix_total(b"hu"), blend.prefix_total(b""), blend.prefix_total(b"x")), (3, 4, 0));
    /// ```
    pub fn prefix_total(&self, prefix: &[u8]) -> u32 {
        self.words
            .iter()
            .filter(|w| w.text().starts_with(prefix))
            .map(|w| u32::from(w.count()))
            .sum()
    }

    /// `P_cache(word | prefix)`; 0 when no learned word starts with `prefix` or `word` does
    /// not.
    ///
    /// ```
    /// # use inkling_core::{user_memory::{CacheBlend, UserMemory}, session::WordList};
    /// let mut memory = UserMemory::<8>::new();
    /// memory.learn_text(b"hut hut hurry", &WordList::EMPTY);
    /// let blend = CacheBlend::new(&memory, 0.3);
    /// assert_eq!(blend.cache_probability(b"hurry", b"h"), 1.0 / 3.0);
    /// assert_eq!(blend.cache_probability(b"hurry", b"x"), 0.0);
    /// ```
    pub fn cache_probability(&self, word: &[u8], prefix: &[u8]) -> f32 {
        let total = self.prefix_total(prefix);
        if total == 0 || !word.starts_with(prefix) {
            return 0.0;
        }
        f32::from(count_in(self.words, word)) / total as f32
    }

    /// `ln((1 − λ) · e^model_logprob + λ · cache_probability)`, computed as a log-sum-exp
    /// so that a very unlikely word does not underflow; `model_logprob = −∞` stands for a
    /// word the model did not score.
    ///
    /// ```
    /// use inkling_core::user_memory::{CacheBlend, UserMemory};
    /// let memory = UserMemory::<8>::new();
    /// let blend = CacheBlend::new(&memory, 0.25);
    /// // (1 - 0.25) * 0.2 + 0.25 * 0.5 = 0.275
    /// let p = blend.blend(0.2f32.ln(), 0.5).exp();
    /// assert!((p - 0.275).abs() < 1e-6);
    /// assert_eq!(blend.blend(f32::NEG_INFINITY, 0.5), (0.25f32 * 0.5).ln());
    /// ```
    pub fn blend(&self, model_logprob: f32, cache_probability: f32) -> f32 {
        let lambda = self.lambda();
        let model = libm::logf(1.0 - lambda) + model_logprob;
        let cache = libm::logf(lambda) + libm::logf(cache_probability);
        let top = model.max(cache);
        if top == f32::NEG_INFINITY || top.is_nan() {
            return f32::NEG_INFINITY;
        }
        top + libm::logf(libm::expf(model - top) + libm::expf(cache - top))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::session::WordList;

    #[test]
    fn the_interpolation_matches_hand_worked_values() {
        // Kuhn & De Mori 1990 (IEEE TPAMI 12(6)): P = (1 - λ) P_model + λ P_cache, with
        // P_cache the word's relative frequency in the cache. Worked by hand:
        // memory "Tamsel" x2, "Tarn" x1, "base" x5; prefix "Ta": P_cache(Tamsel) = 2/3,
        // P_cache(Tarn) = 1/3. λ = 0.2, P_model(Tamsel) = 0.3, P_model(Tarn) = 0.05:
        // P(Tamsel) = 0.8 * 0.3 + 0.2 * 2/3 = 0.24 + 0.133333 = 0.373333
        // P(Tarn)   = 0.8 * 0.05 + 0.2 * 1/3 = 0.04 + 0.066667 = 0.106667
        // P(Tall, not learned, P_model 0.1) = 0.8 * 0.1 = 0.08
        let mut m = UserMemory::<8>::new();
        m.learn_text(
            b"Tamsel Tamsel Tarn base base base base base",
            &WordList::EMPTY,
        );
        let b = CacheBlend::new(&m, 0.2);
        assert_eq!(b.prefix_total(b"Ta"), 3);
        let tamsel = b.cache_probability(b"Tamsel", b"Ta");
        let tarn = b.cache_probability(b"Tarn", b"Ta");
        let tall = b.cache_probability(b"Tall", b"Ta");
        assert_eq!((tamsel, tarn, tall), (2.0 / 3.0, 1.0 / 3.0, 0.0));
        let cases = [
            (0.3f32, tamsel, 0.373_333),
            (0.05, tarn, 0.106_667),
            (0.1, tall, 0.08),
        ];
        for (model, cache, expected) in cases {
            let p = libm::expf(b.blend(libm::logf(model), cache));
            assert!((p - expected).abs() < 1e-5, "{p} vs {expected}");
        }
        // At a word start the whole memory is the cache: P_cache(base | "") = 5/8.
        assert_eq!(b.cache_probability(b"base", b""), 5.0 / 8.0);
    }

    #[test]
    fn the_weight_is_clamped_and_the_extremes_give_one_side() {
        let m = UserMemory::<1>::new();
        let lp = libm::logf(0.4);
        let model_only = CacheBlend::new(&m, 0.0);
        assert_eq!(model_only.blend(lp, 0.9), lp);
        let cache_only = CacheBlend::new(&m, 7.0);
        assert_eq!(cache_only.blend(lp, 0.9), libm::logf(0.9));
        assert_eq!(CacheBlend::new(&m, f32::NAN).blend(lp, 0.9), lp);
        // An unlikely word does not underflow to -inf: e^-200 is below f32's range.
        let b = CacheBlend::new(&m, 0.5);
        assert!((b.blend(-200.0, 0.0) - (-200.0 + libm::logf(0.5))).abs() < 1e-3);
        assert_eq!(b.blend(f32::NEG_INFINITY, 0.0), f32::NEG_INFINITY);
    }
}
