//! The user memory in a file: the bytes of the flash range a device would keep it in, so a
//! file written here can be flashed, and a device's range read out can be loaded here.

use std::path::{Path, PathBuf};

use inkling_core::user_memory::flash_layout::flash_bytes_needed;
use inkling_core::user_memory::{FlashStore, RamFlash};
use inkling_quantize::atomic_file::write_file_atomically;

use crate::error::HostError;
use crate::keystroke_savings::{HostMemory, MEMORY_PHRASES, MEMORY_WORDS};

/// The flash page (erase sector) of the file's layout: 4 KB, the sector of common SPI NOR
/// parts, with 4-byte writes ([`RamFlash`]).
pub const SECTOR: usize = 4096;

/// Bytes of the file: [`flash_bytes_needed`] for [`MEMORY_WORDS`] words and
/// [`MEMORY_PHRASES`] phrases in [`SECTOR`]s.
pub const FILE_BYTES: usize = flash_bytes_needed(MEMORY_WORDS, MEMORY_PHRASES, SECTOR, 4);

/// A memory file: its path and its bytes (all erased for a file that does not exist yet).
#[derive(Debug)]
pub struct MemoryFile {
    path: PathBuf,
    bytes: Vec<u8>,
}

impl MemoryFile {
    /// Opens `path` (a missing file is an empty memory) and reads the memory in it.
    pub fn open(path: &Path) -> Result<(Self, Box<HostMemory>), HostError> {
        let bytes = match std::fs::read(path) {
            Ok(bytes) => bytes,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => vec![0xFF; FILE_BYTES],
            Err(e) => return Err(HostError::io(path)(e)),
        };
        if bytes.len() != FILE_BYTES {
            return Err(HostError::Usage(format!(
                "{}: {} bytes, but a memory file is the {FILE_BYTES} bytes of a flash range \
                 ({MEMORY_WORDS} words and {MEMORY_PHRASES} phrases in {SECTOR}-byte sectors)",
                path.display(),
                bytes.len()
            )));
        }
        let mut file = MemoryFile {
            path: path.to_path_buf(),
            bytes,
        };
        let mut memory = Box::new(HostMemory::new());
        file.with_store(|store| store.load(&mut memory).map(|_| ()))?;
        Ok((file, memory))
    }

    /// Writes what changed in `memory` (loaded from this file) to the flash bytes and the
    /// bytes to the file.
    pub fn save(&mut self, memory: &mut HostMemory) -> Result<(), HostError> {
        self.with_store(|store| {
            // Loading ties the store to the memory in the file; the words of `memory` not
            // yet saved are then written over it.
            store.load(&mut HostMemory::new())?;
            store.save(memory).map(|_| ())
        })?;
        // Whole or not at all, like the flash records it holds: a crash mid-write leaves the
        // file as it was.
        write_file_atomically(&self.path, &self.bytes).map_err(HostError::io(&self.path))
    }

    /// The file's path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    fn with_store(
        &mut self,
        f: impl FnOnce(&mut FlashStore<RamFlash<'_, SECTOR>>) -> Result<(), inkling_core::Error>,
    ) -> Result<(), HostError> {
        let range = 0..FILE_BYTES as u32;
        let path = self.path.clone();
        let flash = RamFlash::<SECTOR>::new(&mut self.bytes);
        let mut store = FlashStore::new(flash, range).map_err(|e| memory_error(&path, e))?;
        f(&mut store).map_err(|e| memory_error(&path, e))
    }
}

fn memory_error(path: &Path, e: inkling_core::Error) -> HostError {
    HostError::Usage(format!("{}: {e}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use inkling_core::session::WordList;

    #[test]
    fn a_memory_saved_to_a_file_reads_back_and_clears() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("memory.flash");
        let (mut file, mut memory) = MemoryFile::open(&path).unwrap();
        assert!(memory.is_empty());
        memory.learn_text(b"Greta at Tamsel Hut, Greta", &WordList::EMPTY);
        file.save(&mut memory).unwrap();
        assert_eq!(std::fs::metadata(&path).unwrap().len() as usize, FILE_BYTES);
        memory.learn(b"Idris", &WordList::EMPTY);
        file.save(&mut memory).unwrap();
        let (mut file, mut again) = MemoryFile::open(&path).unwrap();
        assert_eq!(again.count_of(b"Greta"), 2);
        assert_eq!(again.count_of(b"Idris"), 1);
        assert!(again
            .phrases()
            .iter()
            .any(|p| p.text() == b"Greta at Tamsel Hut"));
        again.clear();
        file.save(&mut again).unwrap();
        let (_, cleared) = MemoryFile::open(&path).unwrap();
        assert!(cleared.is_empty() && cleared.phrases().is_empty());
    }
}
