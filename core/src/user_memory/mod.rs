//! The user memory: the words one device's user types, learned on the device, blended with
//! the model's predictions, and kept in flash.
//!
//! - [`UserMemory`] holds up to `N` words with their counts and the time each was last
//!   typed, in a fixed capacity the firmware chooses; the least recently used word makes
//!   room for a new one. Words of a deny list are never stored; [`UserMemory::clear`]
//!   forgets everything.
//! - With `P` phrase slots (`UserMemory<N, P>`) it also keeps the user's phrases, the last
//!   few words of a sentence each (see [`learned_phrases`]); a search offers the rest of a
//!   phrase whose start is typed once the model has verified it (see
//!   [`draft`](crate::session::draft)).
//! - [`CacheBlend`] lets a search blend the model's word probability with the memory's, as
//!   a cache model (see [`cache_blend`] for the interpolation), and draft from its phrases;
//!   give it in [`SearchOptions::memory`](crate::session::SearchOptions::memory).
//! - [`FlashStore`] keeps it in NOR flash through `embedded-storage`'s `NorFlash`, safe
//!   against power cuts (layout: [`flash_layout`]); [`RamFlash`] is a NOR flash in RAM.
//!
//! **Privacy.** The memory holds what the user typed, names and places among it, and with
//! phrases whole stretches of their sentences, in RAM and (when saved) in flash. Clear it
//! when the device changes hands.
//!
//! ```
//! use inkling_core::session::WordList;
//! use inkling_core::user_memory::{CacheBlend, UserMemory, DEFAULT_CACHE_WEIGHT};
//! let mut memory = UserMemory::<128>::new();
//! memory.learn_text(b"Hi Maren, Tamsel Hut here.", &WordList::EMPTY);
//! let blend = CacheBlend::new(&memory, DEFAULT_CACHE_WEIGHT);
//! assert_eq!(blend.cache_probability(b"Maren", b"Ma"), 1.0);
//! ```

mod blocking_flash;
pub mod cache_blend;
pub mod flash_layout;
pub mod flash_store;
pub mod learned_phrases;
pub mod learned_words;
pub mod ram_flash;

pub use cache_blend::{CacheBlend, DEFAULT_CACHE_WEIGHT};
pub use flash_store::{FlashStore, LoadReport};
pub use learned_phrases::{LearnedPhrase, MAX_PHRASE_LEN};
pub use learned_words::{Learned, LearnedText, LearnedWord, UserMemory, MIN_LEARNED_LEN};
pub use ram_flash::{RamFlash, RamFlashError};
