//! Typing, completion and 12-key entry on top of the engine.
//!
//! A [`Session`] keeps the model's state over the text typed so far and offers:
//! - completions of the word being typed, or of the next word right after a boundary
//!   ([`Session::suggest`]), by beam search over bytes ([`beam_search`]);
//! - 12-key (ITU-T E.161) entry: the likely words whose letters fit the keys pressed
//!   ([`Session::keys`], [`KeyMap`]);
//! - backspace, within a word and across word boundaries;
//! - with a user memory, its learned words blended in and its phrases offered once the
//!   model has verified them ([`draft`]).
//!
//! Deny lists and lexicons are sorted word lists in flash ([`WordList`]); the step budget
//! of a search ([`SearchOptions::max_steps`]) bounds the time per keystroke, and
//! [`Dims::session_bytes`](crate::Dims::session_bytes) the RAM.
//!
//! ```
//! use inkling_core::{Model, Scratch};
//! use inkling_core::session::{Session, SearchOptions, WordFilter, WordList};
//! # let image = inkling_core::image::example::tiny_image();
//! let model = Model::from_bytes(&image)?;
//! let dims = *model.dims();
//! let mut floats = vec![0.0f32; dims.session_floats(3)];
//! let mut work = vec![0.0f32; dims.work_len()];
//! let mut act = vec![0i16; dims.act_len()];
//! let mut session = Session::<_, 3>::new(model, &mut floats,
//!                                        Scratch::new(&dims, &mut work, &mut act)?)?;
//! session.push_bytes(b"see you to")?;
//! static DENY: &[u8] = b"toad\n";
//! let options = SearchOptions {
//!     filter: WordFilter { deny: WordList::new(DENY)?, lexicon: None },
//!     ..SearchOptions::new(3)
//! };
//! for s in &session.suggest(&options)?.list {
//!     assert!(s.text.starts_with(b"to") && s.text.as_slice() != b"toad");
//! }
//! # Ok::<(), inkling_core::Error>(())
//! ```

pub mod beam_search;
mod beam_slots;
pub mod draft;
pub mod keypad;
pub mod log_softmax;
pub mod memory;
pub mod session_buffers;
pub mod suggestion;
pub mod text_history;
pub mod typing_session;
mod utf8_tail;
pub mod word_boundary;
pub mod word_buffer;
pub mod word_list;

pub use keypad::{ByteSet, KeyMap};
pub use log_softmax::LogSoftmax;
pub use session_buffers::{SessionBuffers, StaticSessionBuffers};
pub use suggestion::{SearchOptions, Suggestion, Suggestions, DEFAULT_MARGIN, DEFAULT_MAX_STEPS};
pub use text_history::{TextHistory, DEFAULT_HISTORY};
pub use typing_session::Session;
pub use word_boundary::{is_boundary, PRIME_BYTE};
pub use word_buffer::{Word, WordBuffer, MAX_WORD_LEN};
pub use word_list::{word_order, WordFilter, WordList};
