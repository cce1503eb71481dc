//! The model's typing session as a [`Predictor`].

use inkling_core::engine::weights::Weights;
use inkling_core::session::{SearchOptions, Session};
use inkling_core::Error;

use super::simulation::Predictor;

/// Offers the session's completions of the word being typed (or of the next word). A word
/// byte past the session's word capacity is not fed (the session refuses it).
#[derive(Debug)]
pub struct ModelPredictor<'b, W: Weights, const K: usize> {
    session: Session<'b, W, K>,
    search: SearchOptions<'b>,
    /// Engine steps taken by the searches so far.
    pub search_steps: usize,
}

impl<'b, W: Weights, const K: usize> ModelPredictor<'b, W, K> {
    /// A predictor over `session`, each search run with the step budget and margin of
    /// `search` (its width is the count asked for).
    pub fn new(session: Session<'b, W, K>, search: SearchOptions<'b>) -> Self {
        ModelPredictor {
            session,
            search,
            search_steps: 0,
        }
    }
}

impl<W: Weights, const K: usize> Predictor for ModelPredictor<'_, W, K> {
    type Error = Error;

    fn push(&mut self, byte: u8) -> Result<(), Error> {
        match self.session.push(byte) {
            Err(Error::CapacityExceeded { buffer: "word", .. }) => Ok(()),
            other => other,
        }
    }

    fn offer(&mut self, _prefix: &[u8], count: usize) -> Result<Vec<Vec<u8>>, Error> {
        let options = SearchOptions {
            width: count.min(K),
            ..self.search
        };
        let found = self.session.suggest(&options)?;
        self.search_steps += found.steps;
        Ok(found.list.iter().map(|s| s.text.to_vec()).collect())
    }
}
