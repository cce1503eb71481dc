//! [`FlashStore`]: the user memory kept in NOR flash, safe against power cuts.

use core::ops::Range;

use embedded_storage::nor_flash::NorFlash;
use sequential_storage::cache::{Cache, Uncached};
use sequential_storage::map::{MapConfig, MapStorage};

use super::blocking_flash::{run_to_end, Blocking};
use super::flash_layout::{Record, FORMAT_VERSION, HEADER_KEY, MAX_DATA_BYTES, MAX_STORED_WORDS};
use super::learned_words::{is_learnable, LearnedWord, UserMemory};
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
/// let report = LoadReport { words: 3, skipped: 0 };
/// assert_eq!(report.words, 3);
/// ```
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct LoadReport {
    /// Words read into the memory.
    pub words: usize,
    /// Word records of the live generation skipped (see the
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
    pub fn load<const N: usize>(
        &mut self,
        memory: &mut UserMemory<N>,
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

    fn read_into<const N: usize>(
        &mut self,
        memory: &mut UserMemory<N>,
    ) -> Result<LoadReport, Error> {
        let header = run_to_end(
            self.map
                .fetch_item::<Record<'_>>(&mut self.buffer.0, &HEADER_KEY),
        )?
        .map_err(flash_problem)?;
        self.generation = match header {
            None => 0,
            Some(Record::Header { format, generation }) if format == FORMAT_VERSION => generation,
            Some(_) => {
                return Err(Error::MemoryFlash {
                    problem: FlashProblem::Record,
                })
            }
        };
        let empty = LearnedWord::new(&[], 0, 0);
        let slots = &mut memory.words;
        slots.clear();
        while slots.push(empty).is_ok() {}
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
            let Record::Word {
                generation,
                text,
                count,
                last_used,
            } = record
            else {
                continue;
            };
            if generation != self.generation {
                continue;
            }
            match slots.get_mut(usize::from(key)) {
                Some(slot) if is_learnable(text) && count > 0 => {
                    *slot = LearnedWord::new(text, count, last_used);
                    slot.saved = true;
                }
                _ => skipped += 1,
            }
        }
        // Close the gaps: a word that moves to another slot is written there by the next save.
        let mut kept = 0usize;
        for read in 0..slots.len() {
            let Some(word) = slots.get(read).copied() else {
                break;
            };
            let seen = slots
                .get(..kept)
                .is_some_and(|k| k.iter().any(|w| w.text() == word.text()));
            if word.count() == 0 {
                continue;
            }
            if seen {
                skipped += 1;
                continue;
            }
            if let Some(slot) = slots.get_mut(kept) {
                *slot = word;
                slot.saved = word.saved && read == kept;
            }
            kept += 1;
        }
        slots.truncate(kept);
        memory.clock = slots
            .iter()
            .map(|w| w.last_used().saturating_add(1))
            .max()
            .unwrap_or(0);
        Ok(LoadReport {
            words: kept,
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
    pub fn save<const N: usize>(&mut self, memory: &mut UserMemory<N>) -> Result<usize, Error> {
        const {
            assert!(
                N <= MAX_STORED_WORDS,
                "a memory kept in flash holds at most 65535 words"
            )
        };
        let mut written = 0;
        if memory.cleared || !self.attached {
            self.new_generation()?;
            written += 1;
            memory.cleared = false;
            self.attached = true;
            for word in memory.words.iter_mut() {
                word.saved = false;
            }
        }
        for (slot, word) in memory.words.iter_mut().enumerate() {
            if word.saved {
                continue;
            }
            let record = Record::Word {
                generation: self.generation,
                text: word.text(),
                count: word.count(),
                last_used: word.last_used(),
            };
            let key = u16::try_from(slot).unwrap_or(HEADER_KEY);
            run_to_end(self.map.store_item(&mut self.buffer.0, &key, &record))?
                .map_err(flash_problem)?;
            word.saved = true;
            written += 1;
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
    pub fn clear<const N: usize>(&mut self, memory: &mut UserMemory<N>) -> Result<(), Error> {
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
