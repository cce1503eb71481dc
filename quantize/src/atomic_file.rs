//! Writing a file so that a reader sees the old file or the new one, never half of either.

use std::io::Write;
use std::path::Path;

use crate::error::QuantizeError;

/// Writes `bytes` to `path` through a temporary file in the same folder, flushed to disk and
/// then renamed over `path` (rename within one file system is atomic on POSIX), and the
/// folder flushed so the rename itself is durable. If the process dies before the rename,
/// `path` is untouched and only the temporary file remains.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), QuantizeError> {
    write_file_atomically(path, bytes).map_err(|source| QuantizeError::Io {
        path: path.to_path_buf(),
        source,
    })
}

/// [`write_atomically`] with the bare I/O error, for callers with errors of their own.
pub fn write_file_atomically(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        drop(f);
        std::fs::rename(&tmp, path)?;
        // POSIX: fsync of the folder makes the new directory entry durable.
        std::fs::File::open(dir)?.sync_all()
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn replaces_whole_file_and_leaves_no_temporary() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.bin");
        std::fs::write(&p, b"old contents").unwrap();
        write_atomically(&p, b"new").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"new");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn unwritable_folder_is_an_error_naming_the_file() {
        let err = write_atomically(Path::new("/nonexistent-folder/x.inkl"), b"x").unwrap_err();
        assert!(err.to_string().contains("x.inkl"));
    }
}
