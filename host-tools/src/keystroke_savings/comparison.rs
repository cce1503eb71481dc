//! The model against the baseline on one text: the figures `eval --savings` and the demo print.

use inkling_core::engine::weights::Weights;
use inkling_core::Error;

use crate::commands::suggest::MAX_COUNT;

use super::frequency_baseline::FrequencyBaseline;
use super::model_predictor::{
    LearnOptions, Learning, ModelPredictor, MEMORY_PHRASES, MEMORY_WORDS,
};
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
    /// The model's run with a user memory that starts empty and learns as the writer types
    /// (same search), its engine steps and the cache weight, if asked for.
    pub with_learning: Option<LearningRun>,
}

/// The model's run with learning (see [`Comparison::with_learning`]).
#[derive(Debug, Clone, Copy)]
pub struct LearningRun {
    /// The keys.
    pub keys: KeyCount,
    /// Engine steps of all its searches.
    pub search_steps: usize,
    /// The cache weight `λ` and the drafts' top-k.
    pub options: LearnOptions,
    /// Words the memory held at the end.
    pub words_learned: usize,
    /// Phrases the memory held at the end.
    pub phrases_learned: usize,
    /// Searches that offered a phrase.
    pub phrases_offered: usize,
}

/// Types `text` with the model `weights` and with `baseline`, `count` suggestions each (at
/// most [`MAX_COUNT`]), and, with `learn` set, with the model and a user memory that starts
/// empty; `progress` hears how many bytes of the text a run has done.
pub fn compare(
    weights: &dyn Weights,
    baseline: &mut FrequencyBaseline,
    text: &[u8],
    count: usize,
    search: SearchOptions<'_>,
    learn: Option<LearnOptions>,
    mut progress: impl FnMut(usize),
) -> Result<Comparison, Error> {
    let mut memory = session_memory(weights.dims(), MAX_COUNT);
    let session = memory.session::<_, MAX_COUNT, DEFAULT_HISTORY>(weights)?;
    let mut predictor = ModelPredictor::new(session, search);
    let model = simulate_with(text, count, &mut predictor, |offer| {
        progress(offer.typed.len())
    })?;
    let search_steps = predictor.search_steps;
    let with_learning = match learn {
        Some(options) => {
            let session = memory.session::<_, MAX_COUNT, DEFAULT_HISTORY>(weights)?;
            let mut predictor =
                ModelPredictor::new(session, search).learning(Learning::new(options));
            let keys = simulate_with(text, count, &mut predictor, |offer| {
                progress(offer.typed.len())
            })?;
            Some(LearningRun {
                keys,
                search_steps: predictor.search_steps,
                options,
                words_learned: predictor.learned_words(),
                phrases_learned: predictor.learned_phrases(),
                phrases_offered: predictor.phrases_offered,
            })
        }
        None => None,
    };
    let Ok(baseline) = simulate(text, count, baseline);
    Ok(Comparison {
        count,
        model,
        baseline,
        search_steps,
        with_learning,
    })
}

impl Comparison {
    /// The JSON object `{"model", "baseline", "count", "selection_counts", "auto_space", ...,
    /// "variants": [...]}` (the headline framing first, then the others), with
    /// `"with_learning"` beside `"model"` when the run with a user memory was made.
    pub fn to_json(&self) -> serde_json::Value {
        let (sel, auto) = FRAMINGS[0];
        let mut v = serde_json::json!({
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
        });
        if let Some(run) = &self.with_learning {
            v["with_learning"] = serde_json::json!(run.keys.savings(sel, auto));
            v["learning"] = serde_json::json!({
                "keys": run.keys.with_prediction(sel, auto),
                "words_taken": run.keys.taken,
                "search_steps": run.search_steps,
                "cache_weight": run.options.weight,
                "draft_top_k": run.options.draft_top_k,
                "memory_capacity_words": MEMORY_WORDS,
                "memory_capacity_phrases": MEMORY_PHRASES,
                "words_learned": run.words_learned,
                "phrases_learned": run.phrases_learned,
                "phrases_offered": run.phrases_offered,
                "phrases_taken": run.keys.phrases_taken,
                "variants": FRAMINGS[1..].iter().map(|&(sel, auto)| serde_json::json!({
                    "selection_counts": sel,
                    "auto_space": auto,
                    "with_learning": run.keys.savings(sel, auto),
                })).collect::<Vec<_>>(),
            });
        }
        v
    }

    /// A few lines of text: the savings of both under each framing, and the keys.
    pub fn print(&self) {
        println!(
            "keystroke savings, {} suggestions, {} bytes ({} words):",
            self.count, self.model.bytes, self.model.words
        );
        let learned = if self.with_learning.is_some() {
            format!(" {:>13}", "with learning")
        } else {
            String::new()
        };
        println!(
            "  {:<38} {:>8} {:>8}{learned}",
            "framing", "model", "baseline"
        );
        for (sel, auto) in FRAMINGS {
            let label = format!(
                "selection key {}, {}",
                if sel { "counted" } else { "free" },
                if auto { "auto space" } else { "no auto space" }
            );
            let learned = self.with_learning.map_or(String::new(), |run| {
                format!(" {:>12.1}%", 100.0 * run.keys.savings(sel, auto))
            });
            println!(
                "  {label:<38} {:>7.1}% {:>7.1}%{learned}",
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
        if let Some(run) = &self.with_learning {
            println!(
                "  with learning: {} keys ({} suggestions taken, {} of them phrases; {} phrases \
                 offered), a memory of at most {MEMORY_WORDS} words and {MEMORY_PHRASES} phrases \
                 starting empty ({} and {} at the end), cache weight {}, draft top-k {}, {} engine \
                 steps against {}",
                run.keys.with_prediction(true, false),
                run.keys.taken,
                run.keys.phrases_taken,
                run.phrases_offered,
                run.words_learned,
                run.phrases_learned,
                run.options.weight,
                run.options.draft_top_k,
                run.search_steps,
                self.search_steps
            );
        }
    }
}
