//! [`FlashStore`]: the user memory kept in NOR flash, safe against power cuts.

use core::ops::Range;

use embedded_storage::nor_flash::NorFlash;
use sequential_storage::cache::{Cache, Uncached};
use sequential_storage::map::{MapConfig, MapStorage};

use super::blocking_flash::{run_to_end, Blocking};
use super::flash_layout::{
    Record, FORMAT_VERSION, HEADER_KEY, MAX_DATA_BYTES, MAX_STORED_PHRASES, MAX_STORED_WORDS,
    PHRASE_KEY_BASE, READABLE_VERSIONS,
};
use super::learned_phrases::is_storable_phrase;
use super::learned_words::{is_learnable, LearnedText, UserMemory};
use crate::error::{Error, FlashProblem};

/// The item buffer: the longest item's data rounded up to the largest write size the
/// store supports (32 bytes), aligned for flashes that need aligned buffers.
#[repr(align(32))]
#[derive(Debug)]
struct ItemBuffer([u8; MAX_DATA_BYTES.div_ceil(32) * 32]);

type Map<S> = MapStorage<u16, Blocking<S>, Cache<Uncached, Uncached, Uncached, u16>>;

/// What [`FlashStore::load`] found.
///
/// ```
/// use inkling_core::user_memory::LoadReport;
/// let report = LoadReport { words: 3, phrases: 0, skipped: 0 };
/// assert_eq!(report.words, 3);
/// ```
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct LoadReport {
    /// Words read into the memory.
    pub words: usize,
    /// Phrases read into the memory.
    pub phrases: usize,
    /// Word and phrase records of the live generation skipped (see the
    /// [layout's reading rules](super::flash_layout#reading)).
    pub skipped: usize,
}

/// A user memory kept in a range of NOR flash pages (layout:
/// [`flash_layout`](super::flash_layout)), through `embedded-storage`'s blocking
/// `NorFlash`.
///
/// - [`load`](FlashStore::load) reads the memory back after a reboot;
/// - [`save`](FlashStore::save) writes the words learned or counted since the last save,
///   one record each: each record is a commit, so a power cut during a save keeps every
///   word written before it, and the word being written as it was or as it is;
/// - [`clear`](FlashStore::clear) forgets the memory in RAM and in flash, in one record.
///
/// The range must start and end on page boundaries and hold at least two pages; give it
/// [`flash_bytes_needed`](super::flash_layout::flash_bytes_needed) for the memory's size,
/// or the store may report [`FlashProblem::Full`]. The store uses `sequential-storage`,
/// whose interface is asynchronous only: its futures are run to completion here on the
/// blocking flash (they never wait), with no executor needed from the firmware.
///
/// ```
/// use inkling_core::session::WordList;
/// use inkling_core::user_memory::{FlashStore, RamFlash, UserMemory};
/// let mut bytes = [0xFFu8; 4 * 1024];
/// let mut memory = UserMemory::<16>::new();
/// memory.learn_text(b"Tamsel Hut, Greta", &WordList::EMPTY);
/// let mut store = FlashStore::new(RamFlash::<1024>::new(&mut bytes), 0..4096)?;
/// store.load(&mut UserMemory::<16>::new())?;
/// store.save(&mut memory)?;
/// // After a reboot:
/// let flash = store.into_flash();
/// let mut again = FlashStore::new(flash, 0..4096)?;
/// let mut restored = UserMemory::<16>::new();
/// again.load(&mut restored)?;
/// assert_eq!(restored.count_of(b"Greta"), 1);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub struct FlashStore<S: NorFlash> {
    map: Map<S>,
    buffer: ItemBuffer,
    /// The generation of the live words, once known.
    generation: u32,
    /// Whether [`load`](FlashStore::load) or a save has tied a memory to this store.
    attached: bool,
}

impl<S: NorFlash> core::fmt::Debug for FlashStore<S> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        f.debug_struct("FlashStore")
            .field("generation", &self.generation)
            .field("attached", &self.attached)
            .finish_non_exhaustive()
    }
}

impl<S: NorFlash> FlashStore<S> {
    /// A store over the pages `range` of `flash` (byte addresses), refused with
    /// [`FlashProblem::BadRange`] unless the range is whole pages, at least two.
    ///
    /// ```
    /// use inkling_core::user_memory::{FlashStore, RamFlash};
    /// let mut bytes = [0xFFu8; 2048];
    /// assert!(FlashStore::new(RamFlash::<1024>::new(&mut bytes), 0..1024).is_err());
    /// # let mut bytes = [0xFFu8; 2048];
    /// assert!(FlashStore::new(RamFlash::<1024>::new(&mut bytes), 0..2048).is_ok());
    /// ```
    pub fn new(flash: S, range: Range<u32>) -> Result<Self, Error> {
        let config = MapConfig::<Blocking<S>>::try_new(range).map_err(|_| Error::MemoryFlash {
            problem: FlashProblem::BadRange,
        })?;
        Ok(FlashStore {
            map: MapStorage::new(Blocking(flash), config, Cache::new_uncached()),
            buffer: ItemBuffer([0; MAX_DATA_BYTES.div_ceil(32) * 32]),
            generation: 0,
            attached: false,
        })
    }

    /// Replaces `memory` with the one in flash (empty for erased pages) and ties it to this
    /// store. Damaged records are skipped (see [`LoadReport`]); on an error (a header of
    /// another format, damage the store could not repair, a failing driver) `memory` is
    /// left empty.
    ///
    /// ```
    /// # use inkling_core::user_memory::{FlashStore, RamFlash, UserMemory};
    /// let mut bytes = [0xFFu8; 2048];
    /// let mut store = FlashStore::new(RamFlash::<1024>::new(&mut bytes), 0..2048)?;
    /// let mut memory = UserMemory::<8>::new();
    /// let report = store.load(&mut memory)?;
    /// assert_eq!(report.words, 0);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn load<const N: usize, const P: usize>(
        &mut self,
        memory: &mut UserMemory<N, P>,
    ) -> Result<LoadReport, Error> {
        memory.clear();
        memory.cleared = false;
        let read = self.read_into(memory);
        if read.is_err() {
            memory.clear();
            memory.cleared = false;
        } else {
            self.attached = true;
        }
        read
    }

    fn read_into<const N: usize, const P: usize>(
        &mut self,
        memory: &mut UserMemory<N, P>,
    ) -> Result<LoadReport, Error> {
        let header = run_to_end(
            self.map
                .fetch_item::<Record<'_>>(&mut self.buffer.0, &HEADER_KEY),
        )?
        .map_err(flash_problem)?;
        self.generation = match header {
            None => 0,
            Some(Record::Header { format, generation }) if READABLE_VERSIONS.contains(&format) => {
                generation
            }
            Some(_) => {
                return Err(Error::MemoryFlash {
                    problem: FlashProblem::Record,
                })
            }
        };
        fill_empty(&mut memory.words);
        fill_empty(&mut memory.phrases);
        let mut skipped = 0usize;
        let mut items =
            run_to_end(self.map.fetch_all_items(&mut self.buffer.0))?.map_err(flash_problem)?;
        loop {
            let next = run_to_end(items.next::<Record<'_>>(&mut self.buffer.0))?;
            let (key, record) = match next {
                Ok(Some(item)) => item,
                Ok(None) => break,
                // A record that does not decode is skipped; the iteration goes on.
                Err(sequential_storage::Error::SerializationError(_)) => {
                    skipped += 1;
                    continue;
                }
                Err(e) => return Err(flash_problem(e)),
            };
            let placed = match record {
                Record::Header { .. } => continue,
                Record::Word { generation, .. } | Record::Phrase { generation, .. }
                    if generation != self.generation =>
                {
                    continue
                }
                Record::Word {
                    text,
                    count,
                    last_used,
                    ..
                } => {
                    key < PHRASE_KEY_BASE
                        && is_learnable(text)
                        && place(&mut memory.words, key, text, count, last_used)
                }
                Record::Phrase {
                    text,
                    count,
                    last_used,
                    ..
                } => {
                    let slot = key.wrapping_sub(PHRASE_KEY_BASE);
                    key >= PHRASE_KEY_BASE
                        && is_storable_phrase(text)
                        && place(&mut memory.phrases, slot, text, count, last_used)
                }
            };
            if !placed {
                skipped += 1;
            }
        }
        skipped += close_gaps(&mut memory.words);
        skipped += close_gaps(&mut memory.phrases);
        memory.clock = memory
            .words
            .iter()
            .map(|w| w.last_used().saturating_add(1))
            .chain(
                memory
                    .phrases
                    .iter()
                    .map(|p| p.last_used().saturating_add(1)),
            )
            .max()
            .unwrap_or(0);
        Ok(LoadReport {
            words: memory.words.len(),
            phrases: memory.phrases.len(),
            skipped,
        })
    }

    /// Writes what changed in `memory` since it was loaded or last saved: after a
    /// [`clear`](UserMemory::clear) (or for a memory this store did not load) a new
    /// generation's header first, then each word learned or counted since, one record each.
    /// Returns the records written. A memory of more than
    /// [`MAX_STORED_WORDS`] words is refused at compile time.
    ///
    /// ```
    /// # use inkling_core::{session::WordList, user_memory::{FlashStore, RamFlash, UserMemory}};
    /// let mut bytes = [0xFFu8; 2048];
    /// let mut store = FlashStore::new(RamFlash::<1024>::new(&mut bytes), 0..2048)?;
    /// let mut memory = UserMemory::<8>::new();
    /// store.load(&mut memory)?;
    /// memory.learn_text(b"Orlan Bivouac", &WordList::EMPTY);
    /// assert_eq!(store.save(&mut memory)?, 2);
    /// assert_eq!(store.save(&mut memory)?, 0); // nothing new
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn save<const N: usize, const P: usize>(
        &mut self,
        memory: &mut UserMemory<N, P>,
    ) -> Result<usize, Error> {
        const {
            assert!(
                N <= MAX_STORED_WORDS,
                "a memory kept in flash holds at most 32768 words"
            );
            assert!(
                P <= MAX_STORED_PHRASES,
                "a memory kept in flash holds at most 32767 phrases"
            );
        };
        let mut written = 0;
        if memory.cleared || !self.attached {
            self.new_generation()?;
            written += 1;
            memory.cleared = false;
            self.attached = true;
            memory.words.iter_mut().for_each(|w| w.saved = false);
            memory.phrases.iter_mut().for_each(|p| p.saved = false);
        }
        let generation = self.generation;
        for (slot, word) in memory.words.iter_mut().enumerate() {
            if !word.saved {
                let record = Record::Word {
                    generation,
                    text: word.text(),
                    count: word.count(),
                    last_used: word.last_used(),
                };
                self.store(u16::try_from(slot).unwrap_or(HEADER_KEY), &record)?;
                word.saved = true;
                written += 1;
            }
        }
        for (slot, phrase) in memory.phrases.iter_mut().enumerate() {
            if !phrase.saved {
                let record = Record::Phrase {
                    generation,
                    text: phrase.text(),
                    count: phrase.count(),
                    last_used: phrase.last_used(),
                };
                let key = u16::try_from(slot)
                    .ok()
                    .and_then(|s| PHRASE_KEY_BASE.checked_add(s))
                    .unwrap_or(HEADER_KEY);
                self.store(key, &record)?;
                phrase.saved = true;
                written += 1;
            }
        }
        Ok(written)
    }

    /// Forgets the memory in RAM and in flash: one call, one record (a new generation's
    /// header), so a power cut leaves the memory whole or cleared.
    ///
    /// ```
    /// # use inkling_core::{session::WordList, user_memory::{FlashStore, RamFlash, UserMemory}};
    /// let mut bytes = [0xFFu8; 2048];
    /// let mut store = FlashStore::new(RamFlash::<1024>::new(&mut bytes), 0..2048)?;
    /// let mut memory = UserMemory::<8>::new();
    /// store.load(&mut memory)?;
    /// memory.learn(b"secret", &WordList::EMPTY);
    /// store.save(&mut memory)?;
    /// store.clear(&mut memory)?;
    /// let mut after = UserMemory::<8>::new();
    /// store.load(&mut after)?;
    /// assert!(memory.is_empty() && after.is_empty());
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn clear<const N: usize, const P: usize>(
        &mut self,
        memory: &mut UserMemory<N, P>,
    ) -> Result<(), Error> {
        memory.clear();
        self.save(memory).map(|_| ())
    }

    /// The flash back, e.g. to read its bytes or hand it to another store.
    ///
    /// ```
    /// # use inkling_core::user_memory::{FlashStore, RamFlash};
    /// let mut bytes = [0xFFu8; 2048];
    /// let store = FlashStore::new(RamFlash::<1024>::new(&mut bytes), 0..2048)?;
    /// let flash: RamFlash<'_, 1024> = store.into_flash();
    /// assert_eq!(flash.bytes().len(), 2048);
    /// # Ok::<(), inkling_core::Error>(())
    /// ```
    pub fn into_flash(self) -> S {
        self.map.destroy().0 .0
    }

    /// Writes one record under `key`.
    fn store(&mut self, key: u16, record: &Record<'_>) -> Result<(), Error> {
        run_to_end(self.map.store_item(&mut self.buffer.0, &key, record))?.map_err(flash_problem)
    }

    /// Writes a header of the next generation (the words before it are dropped).
    fn new_generation(&mut self) -> Result<(), Error> {
        let current = run_to_end(
            self.map
                .fetch_item::<Record<'_>>(&mut self.buffer.0, &HEADER_KEY),
        )?
        .map_err(flash_problem)?;
        let base = match current {
            Some(Record::Header { generation, .. }) => generation,
            _ => self.generation,
        };
        self.generation = base.wrapping_add(1);
        let header = Record::Header {
            format: FORMAT_VERSION,
            generation: self.generation,
        };
        run_to_end(
            self.map
                .store_item(&mut self.buffer.0, &HEADER_KEY, &header),
        )?
        .map_err(flash_problem)
    }
}

/// The store's error as this crate's.
fn flash_problem<E>(error: sequential_storage::Error<E>) -> Error {
    use sequential_storage::Error as E;
    let problem = match error {
        E::Storage { .. } => FlashProblem::Driver,
        E::FullStorage | E::ItemTooBig => FlashProblem::Full,
        E::Corrupted { .. } | E::LogicBug { .. } => FlashProblem::Corrupted,
        E::SerializationError(_) | E::BufferTooBig | E::BufferTooSmall(_) => FlashProblem::Record,
        _ => FlashProblem::Corrupted,
    };
    Error::MemoryFlash { problem }
}

/// Fills `slots` to its capacity with empty entries (count 0), for records to land in.
fn fill_empty<const L: usize, const C: usize>(slots: &mut heapless::Vec<LearnedText<L>, C>) {
    slots.clear();
    while slots.push(LearnedText::new(&[], 0, 0)).is_ok() {}
}

/// Puts a record read from flash in slot `slot`; `false` if there is no such slot or the
/// count is 0.
fn place<const L: usize, const C: usize>(
    slots: &mut heapless::Vec<LearnedText<L>, C>,
    slot: u16,
    text: &[u8],
    count: u16,
    last_used: u32,
) -> bool {
    match slots.get_mut(usize::from(slot)) {
        Some(entry) if count > 0 && text.len() <= L => {
            *entry = LearnedText::new(text, count, last_used);
            entry.saved = true;
            true
        }
        _ => false,
    }
}

/// Closes the gaps left by slots no record filled (and drops a text already read); a text
/// that moves to another slot is written there by the next save. Returns the texts dropped.
fn close_gaps<const L: usize, const C: usize>(
    slots: &mut heapless::Vec<LearnedText<L>, C>,
) -> usize {
    let mut kept = 0usize;
    let mut dropped = 0usize;
    for read in 0..slots.len() {
        let Some(entry) = slots.get(read).copied() else {
            break;
        };
        if entry.count() == 0 {
            continue;
        }
        let seen = slots
            .get(..kept)
            .is_some_and(|k| k.iter().any(|w| w.text() == entry.text()));
        if seen {
            dropped += 1;
            continue;
        }
        if let Some(slot) = slots.get_mut(kept) {
            *slot = entry;
            slot.saved = entry.saved && read == kept;
        }
        kept += 1;
    }
    slots.truncate(kept);
    dropped
}
