//! The model's typing session as a [`Predictor`], optionally learning the writer's words.

use inkling_core::engine::weights::Weights;
use inkling_core::session::{is_boundary, SearchOptions, Session, WordList};
use inkling_core::user_memory::{CacheBlend, UserMemory};
use inkling_core::Error;

use super::simulation::Predictor;

/// Words the simulated device's user memory holds: 256 words take about 10 KB of the
/// device's RAM.
pub const MEMORY_WORDS: usize = 256;

/// Phrases the simulated device's user memory holds: 128 phrases take about 7 KB more.
pub const MEMORY_PHRASES: usize = 128;

/// The user memory of the host tools: [`MEMORY_WORDS`] words and [`MEMORY_PHRASES`] phrases.
pub type HostMemory = UserMemory<MEMORY_WORDS, MEMORY_PHRASES>;

/// How a simulated device learns: the cache weight and the k of the phrase drafts'
/// acceptance rule.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LearnOptions {
    /// The cache weight `λ`.
    pub weight: f32,
    /// The k of the top-k acceptance rule (0: no phrase is ever accepted).
    pub draft_top_k: usize,
}

/// A user memory that learns each word, and the phrase ending with it, when the boundary
/// after it is typed, blended into the suggestions as `options` say.
#[derive(Debug)]
pub struct Learning {
    /// The words and phrases learned so far.
    pub memory: Box<HostMemory>,
    /// The cache weight and top-k.
    pub options: LearnOptions,
}

impl Learning {
    /// An empty memory used as `options` say.
    pub fn new(options: LearnOptions) -> Self {
        Learning {
            memory: Box::new(UserMemory::new()),
            options,
        }
    }
}

/// Offers the session's completions of the word being typed (or of the next word). A word
/// byte past the session's word capacity is not fed (the session refuses it).
#[derive(Debug)]
pub struct ModelPredictor<'b, W: Weights, const K: usize> {
    session: Session<'b, W, K>,
    search: SearchOptions<'b>,
    learning: Option<Learning>,
    /// Engine steps taken by the searches so far.
    pub search_steps: usize,
    /// Searches that offered a phrase.
    pub phrases_offered: usize,
}

impl<'b, W: Weights, const K: usize> ModelPredictor<'b, W, K> {
    /// A predictor over `session`, each search run with the step budget and margin of
    /// `search` (its width is the count asked for).
    pub fn new(session: Session<'b, W, K>, search: SearchOptions<'b>) -> Self {
        ModelPredictor {
            session,
            search,
            learning: None,
            search_steps: 0,
            phrases_offered: 0,
        }
    }

    /// The same predictor, learning each word typed into `learning` when the boundary after
    /// it is typed, and blending the memory into its suggestions.
    pub fn learning(self, learning: Learning) -> Self {
        ModelPredictor {
            learning: Some(learning),
            ..self
        }
    }

    /// Phrases in the memory (0 without learning).
    pub fn learned_phrases(&self) -> usize {
        self.learning
            .as_ref()
            .map_or(0, |l| l.memory.phrases().len())
    }

    /// Words in the memory (0 without learning).
    pub fn learned_words(&self) -> usize {
        self.learning.as_ref().map_or(0, |l| l.memory.len())
    }
}

impl<W: Weights, const K: usize> Predictor for ModelPredictor<'_, W, K> {
    type Error = Error;

    fn push(&mut self, byte: u8) -> Result<(), Error> {
        if let Some(learning) = &mut self.learning {
            if is_boundary(byte) {
                learning.memory.learn(self.session.word(), &WordList::EMPTY);
                let typed: Vec<u8> = self.session.history().iter().collect();
                learning.memory.learn_phrase(&typed, &WordList::EMPTY);
            }
        }
        match self.session.push(byte) {
            Err(Error::CapacityExceeded { buffer: "word", .. }) => Ok(()),
            other => other,
        }
    }

    fn offer(&mut self, _prefix: &[u8], count: usize) -> Result<Vec<Vec<u8>>, Error> {
        let options = SearchOptions {
            width: count.min(K),
            memory: self.learning.as_ref().map(|l| CacheBlend {
                top_k: l.options.draft_top_k,
                ..CacheBlend::new(&l.memory, l.options.weight)
            }),
            ..self.search
        };
        let found = self.session.suggest(&options)?;
        self.search_steps += found.steps;
        self.phrases_offered += usize::from(found.phrase.is_some());
        // The phrase takes the last place (the search left it free).
        let phrase = found.phrase.iter().map(|p| p.text.to_vec());
        Ok(found
            .list
            .iter()
            .map(|s| s.text.to_vec())
            .chain(phrase)
            .collect())
    }
}
