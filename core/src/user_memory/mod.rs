//! The user memory: the words one device's user types, learned on the device, blended with
//! the model's predictions, and kept in flash.
//!
//! - [`UserMemory`] holds up to `N` words with their counts and the time each was last
//!   typed, in a fixed capacity the firmware chooses; the least recently used word makes
//!   room for a new one. Words of a deny list are never stored; [`UserMemory::clear`]
//!   forgets everything.
//! - [`CacheBlend`] lets a search blend the model's word probability with the memory's, as
//!   a cache model (see [`cache_blend`] for the interpolation); give it in
//!   [`SearchOptions::memory`](crate::session::SearchOptions::memory).
//!
//! **Privacy.** The memory holds what the user typed, names and places among it, in RAM and
//! (when saved) in flash. Clear it when the device changes hands.
//!
//! ```
//! use inkling_core::session::WordList;
//! use inkling_core::user_memory::{CacheBlend, UserMemory, DEFAULT_CACHE_WEIGHT};
//! let mut memory = UserMemory::<128>::new();
//! memory.learn_text(b"Hi Maren, Tamsel Hut here.", &WordList::EMPTY);
//! let blend = CacheBlend::new(&memory, DEFAULT_CACHE_WEIGHT);
//! assert_eq!(blend.cache_probability(b"Maren", b"Ma"), 1.0);
//! ```

pub mod cache_blend;
pub mod learned_words;

pub use cache_blend::{CacheBlend, DEFAULT_CACHE_WEIGHT};
pub use learned_words::{Learned, LearnedWord, UserMemory, MIN_LEARNED_LEN};
