//! The model against the baseline on one text: the figures `eval --savings` and the demo print.

use inkling_core::engine::weights::Weights;
use inkling_core::Error;

use crate::commands::suggest::MAX_COUNT;

use super::frequency_baseline::FrequencyBaseline;
use super::model_predictor::ModelPredictor;
use super::session_memory::session_memory;
use super::simulation::{simulate, simulate_with, KeyCount};
use inkling_core::session::{SearchOptions, DEFAULT_HISTORY};

/// The framings reported: (selection key counted, automatic space). The first is the headline.
pub const FRAMINGS: [(bool, bool); 3] = [(true, false), (true, true), (false, false)];

/// Keys of the model and of the baseline on the same text with the same number of suggestions.
#[derive(Debug, Clone, Copy)]
pub struct Comparison {
    /// Suggestions shown at each key.
    pub count: usize,
    /// The model's run.
    pub model: KeyCount,
    /// The baseline's run.
    pub baseline: KeyCount,
    /// Engine steps of all the model's searches.
    pub search_steps: usize,
}

/// Types `text` with the model `weights` and with `baseline`, `count` suggestions each (at
/// most [`MAX_COUNT`]); `progress` hears how many bytes of the text the model has done.
pub fn compare(
    weights: &dyn Weights,
    baseline: &mut FrequencyBaseline,
    text: &[u8],
    count: usize,
    search: SearchOptions<'_>,
    mut progress: impl FnMut(usize),
) -> Result<Comparison, Error> {
    let mut memory = session_memory(weights.dims(), MAX_COUNT);
    let session = memory.session::<_, MAX_COUNT, DEFAULT_HISTORY>(weights)?;
    let mut predictor = ModelPredictor::new(session, search);
    let model = simulate_with(text, count, &mut predictor, |offer| {
        progress(offer.typed.len())
    })?;
    let Ok(baseline) = simulate(text, count, baseline);
    Ok(Comparison {
        count,
        model,
        baseline,
        search_steps: predictor.search_steps,
    })
}

impl Comparison {
    /// The JSON object `{"model", "baseline", "count", "selection_counts", "auto_space", ...,
    /// "variants": [...]}` (the headline framing first, then the others).
    pub fn to_json(&self) -> serde_json::Value {
        let (sel, auto) = FRAMINGS[0];
        serde_json::json!({
            "model": self.model.savings(sel, auto),
            "baseline": self.baseline.savings(sel, auto),
            "count": self.count,
            "selection_counts": sel,
            "auto_space": auto,
            "bytes": self.model.bytes,
            "words": self.model.words,
            "keys_letter_by_letter": self.model.bytes,
            "model_keys": self.model.with_prediction(sel, auto),
            "baseline_keys": self.baseline.with_prediction(sel, auto),
            "model_words_taken": self.model.taken,
            "baseline_words_taken": self.baseline.taken,
            "search_steps": self.search_steps,
            "variants": FRAMINGS[1..].iter().map(|&(sel, auto)| serde_json::json!({
                "selection_counts": sel,
                "auto_space": auto,
                "model": self.model.savings(sel, auto),
                "baseline": self.baseline.savings(sel, auto),
            })).collect::<Vec<_>>(),
        })
    }

    /// A few lines of text: the savings of both under each framing, and the keys.
    pub fn print(&self) {
        println!(
            "keystroke savings, {} suggestions, {} bytes ({} words):",
            self.count, self.model.bytes, self.model.words
        );
        println!("  {:<38} {:>8} {:>8}", "framing", "model", "baseline");
        for (sel, auto) in FRAMINGS {
            let label = format!(
                "selection key {}, {}",
                if sel { "counted" } else { "free" },
                if auto { "auto space" } else { "no auto space" }
            );
            println!(
                "  {label:<38} {:>7.1}% {:>7.1}%",
                100.0 * self.model.savings(sel, auto),
                100.0 * self.baseline.savings(sel, auto)
            );
        }
        println!(
            "  keys: {} letter by letter, {} with the model ({} words taken), {} with the baseline ({} taken)",
            self.model.bytes,
            self.model.with_prediction(true, false),
            self.model.taken,
            self.baseline.with_prediction(true, false),
            self.baseline.taken
        );
    }
}
