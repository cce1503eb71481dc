//! Keystroke savings: how many keys word completion saves a writer, by simulation.
//!
//! **Definition** (the word-prediction literature; Trnka & McCoy 2008, "Evaluating Word
//! Prediction: Framing Keystroke Savings", ACL-08 short papers):
//!
//! ```text
//! KS = (keys letter by letter − keys with prediction) / keys letter by letter
//! ```
//!
//! **The simulated writer.** The text is typed byte by byte; every byte is one key when typed.
//! Before each byte of a word (including its first, where the offer is a next-word
//! prediction), the writer looks at the `K` suggestions; if one of them is exactly the word
//! being typed, they take it and the rest of the word is entered for them. Boundary bytes
//! (spaces, punctuation, newlines) are always typed. A suggestion is a whole word, so "the"
//! offered while typing "then" is not taken. A phrase suggestion (several words from the
//! user memory) is taken the same way, with one key, when the text goes on with exactly
//! those words (ending where a word ends): the rest of the phrase, boundary bytes between
//! its words included, is entered for the writer. When several suggestions fit, the writer
//! takes the longest.
//!
//! **Two choices the figure depends on** (Trnka & McCoy 2008 show both move it by several
//! points), reported explicitly:
//! - `selection_counts: true` — taking a suggestion costs one key. Every key the writer
//!   presses is counted; a figure without it flatters the method.
//! - `auto_space: false` — taking a word inserts nothing after it, which is what
//!   `inkling try` does; the writer types the following space or punctuation.
//!
//! Those are the headline figure. [`KeyCount`] also gives the other framings: without the
//! selection key, and with an automatic space (the space after a taken word is saved when the
//! text has one; otherwise the writer deletes the inserted space with one backspace key).
//!
//! A word longer than [`MAX_WORD_LEN`](inkling_core::session::MAX_WORD_LEN) bytes cannot be
//! completed by the session; its bytes past the limit are typed but not fed to the model.

pub mod comparison;
pub mod frequency_baseline;
pub mod keypad_entry;
pub mod model_predictor;
pub mod session_memory;
pub mod simulation;

pub use comparison::{compare, Comparison, LearningRun};
pub use frequency_baseline::FrequencyBaseline;
pub use keypad_entry::{keypad_entry, KeypadCount};
pub use model_predictor::{
    HostMemory, LearnOptions, Learning, ModelPredictor, MEMORY_PHRASES, MEMORY_WORDS,
};
pub use session_memory::{session_memory, SessionMemory};
pub use simulation::{simulate, simulate_with, KeyCount, Offer, Predictor};
