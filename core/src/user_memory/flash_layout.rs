//! The user memory in NOR flash, format version 2, byte by byte.
//!
//! Version 2 added the phrase records (variant 2) and split the keys below the header
//! between words and phrases; the word and header records are the bytes of version 1, and
//! a version 1 memory (words only) is read as it is.
//!
//! The memory lives in a range of whole flash pages (erase units) given to
//! [`FlashStore`](super::FlashStore), managed as a key-value map by the `sequential-storage`
//! crate, version 8 (its map, with no cache). Its layout is that crate's; what this project
//! adds is the keys and the records.
//!
//! ## Pages (the crate's layout)
//! - The range is at least two pages. A page is *open* (all `0xFF`), *partly written*
//!   (its first flash word written with the marker byte `0x00`) or *closed* (its last flash
//!   word written too). Pages are used in turn, so erases are spread over all of them.
//! - Between the markers, items follow one another from the first word on, each aligned to
//!   the flash's write size `W`:
//!
//! | offset | size | field |
//! |---|---|---|
//! | 0 | 4 | CRC-32 of the data (the crate's variant, never 0; 0 marks an item erased) |
//! | 4 | 2 | data length `L`, little-endian |
//! | 6 | 2 | CRC-16 of the length field |
//! | 8, padded to `W` | `L` | data: the key, then the record |
//! | then | | padding to `W` (`0xFF`) |
//!
//! - A new value of a key is appended; the last one in page order is the live one. When the
//!   pages fill, the oldest page's live items are copied forward before it is erased.
//! - An item whose header or data CRC fails is skipped; a page left half-erased by a power
//!   cut is erased again on the next operation. So a power cut during a write leaves the
//!   previous value of the key being written, or the new one.
//!
//! ## Keys (2 bytes, little-endian `u16`)
//! - [`HEADER_KEY`] (`0xFFFF`): the header record.
//! - `0 ..= 0x7FFF`: the word record of that slot of the [`UserMemory`](super::UserMemory)
//!   (so a memory holds at most [`MAX_STORED_WORDS`] words).
//! - `0x8000 ..= 0xFFFE` ([`PHRASE_KEY_BASE`] + slot): the phrase record of that phrase slot
//!   (at most [`MAX_STORED_PHRASES`] phrases).
//!
//! ## Records ([postcard](https://postcard.jamesmunns.com) 1.x wire format)
//! One enum, so every item decodes with one type; integers are varints (`u16`, `u32`:
//! LEB128, 7 bits a byte, least significant first), byte strings a varint length then the
//! bytes.
//!
//! | variant (varint) | fields, in order |
//! |---|---|
//! | 0, header | `format: u16` ([`FORMAT_VERSION`]), `generation: u32` |
//! | 1, word | `generation: u32`, `text: bytes` (2 ..= 32 bytes of UTF-8, no word boundary), `count: u16` (≥ 1), `last_used: u32` |
//! | 2, phrase (version 2) | `generation: u32`, `text: bytes` (3 ..= 48 bytes of UTF-8: words and the boundary bytes between them, starting and ending with a word byte, no `.`, `!`, `?`, `\n`, `\r`), `count: u16` (≥ 1), `last_used: u32` |
//!
//! ## Reading
//! The generation is the header's (0 when there is none). The memory is the word and phrase
//! records of that generation, each slot's last one, in slot order. A record that does not
//! decode, a text that is no word (no phrase), a count of 0, a text already read, a record
//! under the other kind's keys, or a slot at or past the memory's capacity is skipped; the
//! texts after a skipped slot move down one (and are written again at their new slots by
//! the next save). A header of a format other than 1 or 2 is an error
//! ([`FlashProblem::Record`](crate::error::FlashProblem::Record)).
//!
//! ## Writing
//! - A learned word writes its slot's record (one item): that is the commit of that word;
//!   a learned phrase likewise. A save writes the changed words first, then the phrases.
//!   Records are appended to space that reads as erased and are not read back: on flash
//!   damaged by something other than the store and power cuts (stray bits in that space), a
//!   record may be spoilt as it is written; the next load skips it.
//! - Clearing writes a header with the generation plus one: one item, so a clear is whole
//!   or not at all; the older words stay in flash, ignored, until their slots are written
//!   again or their pages erased.
//!
//! ```
//! use inkling_core::user_memory::flash_layout::{HEADER_KEY, FORMAT_VERSION, max_item_bytes};
//! assert_eq!((HEADER_KEY, FORMAT_VERSION), (0xFFFF, 2));
//! assert!(max_item_bytes(4) <= 80);
//! ```

use serde::{Deserialize, Serialize};

/// The format version written in the header record.
///
/// ```
/// assert_eq!(inkling_core::user_memory::flash_layout::FORMAT_VERSION, 2);
/// ```
pub const FORMAT_VERSION: u16 = 2;

/// The format versions a store reads: 1 (words only) and 2.
///
/// ```
/// assert_eq!(inkling_core::user_memory::flash_layout::READABLE_VERSIONS, [1, 2]);
/// ```
pub const READABLE_VERSIONS: [u16; 2] = [1, 2];

/// The key of phrase slot 0; phrase slot `s` has key `PHRASE_KEY_BASE + s`.
///
/// ```
/// assert_eq!(inkling_core::user_memory::flash_layout::PHRASE_KEY_BASE, 0x8000);
/// ```
pub const PHRASE_KEY_BASE: u16 = 0x8000;

/// The key of the header record.
///
/// ```
/// assert_eq!(inkling_core::user_memory::flash_layout::HEADER_KEY, u16::MAX);
/// ```
pub const HEADER_KEY: u16 = u16::MAX;

/// The most words a memory kept in flash may hold (slots are keys below
/// [`PHRASE_KEY_BASE`]).
///
/// ```
/// assert_eq!(inkling_core::user_memory::flash_layout::MAX_STORED_WORDS, 32768);
/// ```
pub const MAX_STORED_WORDS: usize = PHRASE_KEY_BASE as usize;

/// The most phrases a memory kept in flash may hold (keys from [`PHRASE_KEY_BASE`] to below
/// [`HEADER_KEY`]).
///
/// ```
/// assert_eq!(inkling_core::user_memory::flash_layout::MAX_STORED_PHRASES, 32767);
/// ```
pub const MAX_STORED_PHRASES: usize = (HEADER_KEY - PHRASE_KEY_BASE) as usize;

/// The longest data of an item: a 2-byte key and a phrase record (variant 1 byte,
/// generation 5, text 1 + 48, count 3, time 5).
///
/// ```
/// assert_eq!(inkling_core::user_memory::flash_layout::MAX_DATA_BYTES, 65);
/// ```
pub const MAX_DATA_BYTES: usize = 2 + 1 + 5 + 1 + super::MAX_PHRASE_LEN + 3 + 5;

/// The longest data of a word item: a 2-byte key and a word record (variant 1 byte,
/// generation 5, text 1 + 32, count 3, time 5).
///
/// ```
/// assert_eq!(inkling_core::user_memory::flash_layout::MAX_WORD_DATA_BYTES, 49);
/// ```
pub const MAX_WORD_DATA_BYTES: usize = 2 + 1 + 5 + 1 + crate::session::MAX_WORD_LEN + 3 + 5;

/// The most flash bytes one item takes with a write size of `word` bytes: the 8-byte header
/// and the data, each padded to whole words.
///
/// ```
/// use inkling_core::user_memory::flash_layout::max_item_bytes;
/// assert_eq!(max_item_bytes(4), 8 + 68);
/// assert_eq!(max_item_bytes(1), 8 + 65);
/// ```
pub const fn max_item_bytes(word: usize) -> usize {
    item_bytes(MAX_DATA_BYTES, word)
}

/// Flash bytes of an item of `data` bytes of data with a write size of `word` bytes.
const fn item_bytes(data: usize, word: usize) -> usize {
    let word = if word == 0 { 1 } else { word };
    8usize.div_ceil(word) * word + data.div_ceil(word) * word
}

/// Flash bytes a memory of `words` words and `phrases` phrases needs in pages of `page`
/// bytes with a write size of `word` bytes: room for every slot's record and the header at
/// the largest item (a word item's without phrases, a phrase item's with them), in pages
/// less their two marker words, plus two spare pages for the store to move items into
/// before it erases one (our margin; common practice, no source). 0 if a page cannot hold
/// one item.
///
/// ```
/// use inkling_core::user_memory::flash_layout::flash_bytes_needed;
/// // 256 words in 4 KB sectors with 4-byte writes: 257 items of at most 60 bytes, 68 to a
/// // page; with 128 phrases, 385 items of at most 76 bytes, 53 to a page.
/// assert_eq!(flash_bytes_needed(256, 0, 4096, 4), (4 + 2) * 4096);
/// assert_eq!(flash_bytes_needed(256, 128, 4096, 4), (8 + 2) * 4096);
/// ```
pub const fn flash_bytes_needed(words: usize, phrases: usize, page: usize, word: usize) -> usize {
    let item = if phrases == 0 {
        item_bytes(MAX_WORD_DATA_BYTES, word)
    } else {
        max_item_bytes(word)
    };
    let usable = page.saturating_sub(2 * word);
    if usable < item {
        return 0;
    }
    let per_page = usable / item;
    ((words + phrases + 1).div_ceil(per_page) + 2) * page
}

/// One record (see the [module docs](self)).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub(crate) enum Record<'a> {
    /// The header: the format and the generation of the live words.
    Header { format: u16, generation: u32 },
    /// The word of one slot.
    Word {
        generation: u32,
        text: &'a [u8],
        count: u16,
        last_used: u32,
    },
    /// The phrase of one phrase slot (format version 2).
    Phrase {
        generation: u32,
        text: &'a [u8],
        count: u16,
        last_used: u32,
    },
}

impl<'a> sequential_storage::map::Value<'a> for Record<'a> {
    fn serialize_into(
        &self,
        buffer: &mut [u8],
    ) -> Result<usize, sequential_storage::map::SerializationError> {
        postcard::to_slice(self, buffer)
            .map(|used| used.len())
            .map_err(|_| sequential_storage::map::SerializationError::BufferTooSmall)
    }

    fn deserialize_from(
        buffer: &'a [u8],
    ) -> Result<(Self, usize), sequential_storage::map::SerializationError> {
        postcard::take_from_bytes(buffer)
            .map(|(record, rest)| (record, buffer.len() - rest.len()))
            .map_err(|_| sequential_storage::map::SerializationError::InvalidFormat)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn records_encode_as_the_spec_says() {
        // postcard's wire format (postcard 1.x specification): enum variant as a varint,
        // u16/u32 as LEB128 varints, byte slices as a varint length and the bytes.
        let mut buf = [0u8; 80];
        let header = Record::Header {
            format: 1,
            generation: 300,
        };
        let n = postcard::to_slice(&header, &mut buf).unwrap().len();
        // 300 = 0b10_0101100: 0xAC 0x02.
        assert_eq!(&buf[..n], &[0, 1, 0xAC, 0x02]);
        let word = Record::Word {
            generation: 0,
            text: b"Hut",
            count: 128,
            last_used: 5,
        };
        let n = postcard::to_slice(&word, &mut buf).unwrap().len();
        assert_eq!(&buf[..n], &[1, 0, 3, b'H', b'u', b't', 0x80, 0x01, 5]);
        let longest = Record::Word {
            generation: u32::MAX,
            text: &[b'a'; crate::session::MAX_WORD_LEN],
            count: u16::MAX,
            last_used: u32::MAX,
        };
        let n = postcard::to_slice(&longest, &mut buf).unwrap().len();
        assert_eq!(2 + n, MAX_WORD_DATA_BYTES);
        let phrase = Record::Phrase {
            generation: 1,
            text: b"a b",
            count: 2,
            last_used: 300,
        };
        let n = postcard::to_slice(&phrase, &mut buf).unwrap().len();
        assert_eq!(&buf[..n], &[2, 1, 3, b'a', b' ', b'b', 2, 0xAC, 0x02]);
        let longest = Record::Phrase {
            generation: u32::MAX,
            text: &[b'a'; super::super::MAX_PHRASE_LEN],
            count: u16::MAX,
            last_used: u32::MAX,
        };
        let n = postcard::to_slice(&longest, &mut buf).unwrap().len();
        assert_eq!(2 + n, MAX_DATA_BYTES);
    }
}
