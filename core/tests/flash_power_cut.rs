//! The user memory's flash store under power cuts: a simulated NOR flash that loses power
//! after every possible number of flash-word writes and page erases, then a reboot that
//! reads the memory back. It must be the memory of the last commit or of the one being
//! made, never anything else, and the store must go on working.
//!
//! The flash model is NOR flash as its datasheets describe it (e.g. any SPI NOR part's
//! page-program and sector-erase commands): erasing sets a sector to `0xFF`, programming
//! can only clear bits, and an operation cut short leaves its target partly done: here, a
//! flash word with only its first half programmed, or a sector with only its first half
//! erased (a model of a torn operation; common practice, no source for the exact pattern).

use embedded_storage::nor_flash::{
    ErrorType, NorFlash, NorFlashError, NorFlashErrorKind, ReadNorFlash,
};
use inkling_core::session::WordList;
use inkling_core::user_memory::flash_layout::flash_bytes_needed;
use inkling_core::user_memory::{FlashStore, UserMemory};

const PAGE: usize = 256;
const WORD: usize = 4;
const WORDS: usize = 8;
const PHRASES: usize = 4;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct PowerCut;

impl NorFlashError for PowerCut {
    fn kind(&self) -> NorFlashErrorKind {
        NorFlashErrorKind::Other
    }
}

/// NOR flash that loses power after `left` operations (one flash-word write or one page
/// erase each), with counts of operations and erases per page.
struct CutFlash {
    bytes: Vec<u8>,
    left: Option<usize>,
    dead: bool,
    operations: usize,
    erases: Vec<usize>,
}

impl CutFlash {
    fn new(bytes: Vec<u8>, left: Option<usize>) -> Self {
        let pages = bytes.len() / PAGE;
        CutFlash {
            bytes,
            left,
            dead: false,
            operations: 0,
            erases: vec![0; pages],
        }
    }

    /// Takes one operation; `false` when power goes during it.
    fn operate(&mut self) -> bool {
        self.operations += 1;
        match &mut self.left {
            Some(0) => {
                self.dead = true;
                false
            }
            Some(n) => {
                *n -= 1;
                true
            }
            None => true,
        }
    }
}

impl ErrorType for CutFlash {
    type Error = PowerCut;
}

impl ReadNorFlash for CutFlash {
    const READ_SIZE: usize = 1;

    fn read(&mut self, offset: u32, bytes: &mut [u8]) -> Result<(), PowerCut> {
        if self.dead {
            return Err(PowerCut);
        }
        let at = offset as usize;
        bytes.copy_from_slice(&self.bytes[at..at + bytes.len()]);
        Ok(())
    }

    fn capacity(&self) -> usize {
        self.bytes.len()
    }
}

impl NorFlash for CutFlash {
    const WRITE_SIZE: usize = WORD;
    const ERASE_SIZE: usize = PAGE;

    fn erase(&mut self, from: u32, to: u32) -> Result<(), PowerCut> {
        for page in (from as usize..to as usize).step_by(PAGE) {
            if self.dead {
                return Err(PowerCut);
            }
            if !self.operate() {
                self.bytes[page..page + PAGE / 2].fill(0xFF);
                return Err(PowerCut);
            }
            self.bytes[page..page + PAGE].fill(0xFF);
            self.erases[page / PAGE] += 1;
        }
        Ok(())
    }

    fn write(&mut self, offset: u32, bytes: &[u8]) -> Result<(), PowerCut> {
        assert!((offset as usize).is_multiple_of(WORD) && bytes.len().is_multiple_of(WORD));
        for (i, word) in bytes.chunks(WORD).enumerate() {
            if self.dead {
                return Err(PowerCut);
            }
            let at = offset as usize + i * WORD;
            let torn = !self.operate();
            let programmed = if torn { WORD / 2 } else { WORD };
            for (cell, &b) in self.bytes[at..at + programmed].iter_mut().zip(word) {
                *cell &= b;
            }
            if torn {
                return Err(PowerCut);
            }
        }
        Ok(())
    }
}

type Memory = UserMemory<WORDS, PHRASES>;
type Snapshot = Vec<(Vec<u8>, u16, u32)>;

/// The words, then an empty entry, then the phrases.
fn snapshot(memory: &Memory) -> Snapshot {
    let entry = |t: &[u8], c, l| (t.to_vec(), c, l);
    let words = memory
        .words()
        .iter()
        .map(|w| entry(w.text(), w.count(), w.last_used()));
    let phrases = memory
        .phrases()
        .iter()
        .map(|p| entry(p.text(), p.count(), p.last_used()));
    words.chain([(Vec::new(), 0, 0)]).chain(phrases).collect()
}

/// One step of the scenario: a word learned and saved (one record), the phrase that ends
/// with the words learned so far learned and saved (one record), or a clear.
#[derive(Clone, Copy)]
enum Step {
    Learn(&'static str),
    Phrase,
    Clear,
}

fn scenario() -> Vec<Step> {
    let text = "Greta Tamsel Hut Greta base Orlan Bivouac Greta Idris Maren Tamsel Hut \
                stretcher Aldwen Greta Hut Ulvenholt oxygen Maren Tamsel radio check Greta";
    // The text forwards and backwards, eight times over, with a clear in the first pass:
    // enough records to fill the pages several times, so that pages are reclaimed.
    let mut steps: Vec<Step> = Vec::new();
    for pass in 0..8 {
        let words: Vec<&'static str> = if pass % 2 == 0 {
            text.split(' ').collect()
        } else {
            text.split(' ').rev().collect()
        };
        for word in words {
            steps.push(Step::Learn(word));
            // Phrases in the first two passes: each is a record of its own.
            if pass < 2 {
                steps.push(Step::Phrase);
            }
        }
    }
    steps.insert(14, Step::Clear);
    steps
}

fn range(flash_len: usize) -> core::ops::Range<u32> {
    0..flash_len as u32
}

/// Runs the scenario on a fresh flash that loses power after `left` operations; returns
/// the flash and the memories after each completed commit (the first is the empty one).
fn run(left: Option<usize>, flash_len: usize) -> (CutFlash, Vec<Snapshot>, usize) {
    let flash = CutFlash::new(vec![0xFF; flash_len], left);
    let mut store = FlashStore::new(flash, range(flash_len)).unwrap();
    let mut memory = Memory::new();
    let mut states = vec![snapshot(&memory)];
    let mut committed = 0;
    let mut text = String::new();
    if store.load(&mut memory).is_ok() {
        for step in scenario() {
            let done = match step {
                Step::Learn(word) => {
                    memory.learn(word.as_bytes(), &WordList::EMPTY);
                    text.push(' ');
                    text.push_str(word);
                    store.save(&mut memory).map(|_| ())
                }
                Step::Phrase => {
                    memory.learn_phrase(text.as_bytes(), &WordList::EMPTY);
                    store.save(&mut memory).map(|_| ())
                }
                Step::Clear => store.clear(&mut memory),
            };
            states.push(snapshot(&memory));
            if done.is_err() {
                break;
            }
            committed += 1;
        }
    }
    (store.into_flash(), states, committed)
}

#[test]
fn a_power_cut_after_any_number_of_flash_writes_keeps_the_last_or_the_new_memory() {
    let flash_len = flash_bytes_needed(WORDS, PHRASES, PAGE, WORD);
    // 13 items of at most 76 bytes, 3 to a 256-byte page, and two spare pages.
    assert_eq!(flash_len, 7 * PAGE);
    let (whole, states, committed) = run(None, flash_len);
    assert_eq!(committed, scenario().len());
    let operations = whole.operations;
    // Writes are spread over the pages: the store uses them in turn.
    let (least, most) = (
        *whole.erases.iter().min().unwrap(),
        *whole.erases.iter().max().unwrap(),
    );
    assert!(
        least >= 2 && most - least <= 1,
        "erases per page {:?}",
        whole.erases
    );
    let final_memory = states.last().unwrap().clone();
    let mut outcomes = [0usize; 2];
    for cut in 0..=operations {
        let (flash, states, committed) = run(Some(cut), flash_len);
        // Reboot: the same bytes, power back.
        let rebooted = CutFlash::new(flash.bytes, None);
        let mut store = FlashStore::new(rebooted, range(flash_len)).unwrap();
        let mut memory = Memory::new();
        let report = store
            .load(&mut memory)
            .unwrap_or_else(|e| panic!("cut after {cut} operations: {e}"));
        assert_eq!(report.skipped, 0, "cut after {cut}");
        let recovered = snapshot(&memory);
        let last = &states[committed];
        let new = states.get(committed + 1);
        let which = if &recovered == last {
            0
        } else if Some(&recovered) == new {
            1
        } else {
            panic!(
                "cut after {cut} operations ({committed} commits): recovered {recovered:?}, \
                 expected {last:?} or {new:?}"
            );
        };
        outcomes[which] += 1;
        // The store goes on working after the repair: a word saved now is there next boot.
        memory.learn(b"afterwards", &WordList::EMPTY);
        store
            .save(&mut memory)
            .unwrap_or_else(|e| panic!("cut after {cut}: {e}"));
        let mut again = FlashStore::new(store.into_flash(), range(flash_len)).unwrap();
        let mut next = Memory::new();
        again.load(&mut next).unwrap();
        assert_eq!(snapshot(&next), snapshot(&memory), "cut after {cut}");
    }
    // Both outcomes happen: cuts before an item's last word keep the old memory, cuts
    // after it the new one.
    eprintln!(
        "{operations} cut points: old memory {}, new memory {}",
        outcomes[0], outcomes[1]
    );
    assert!(outcomes[0] > 0 && outcomes[1] > 0, "{outcomes:?}");
    // The scenario filled the memory, words and phrases, so eviction was exercised too.
    assert_eq!(final_memory.len(), WORDS + 1 + PHRASES);
}
