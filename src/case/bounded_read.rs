//! Reading an input file the user names, within a size limit that follows from what the file must hold.
//! Only regular files are read: a pipe without a writer would block forever and `/dev/zero` never ends, so
//! both are refused before they are opened (opening a FIFO alone can block).

use std::io::Read;
use std::path::Path;

/// Why an input file was not read.
#[derive(Debug, thiserror::Error)]
pub enum BoundedReadError {
    #[error("{0}")]
    Io(#[from] std::io::Error),
    #[error("it is not a regular file (a folder, a pipe or a device); give a file")]
    NotRegular,
    #[error("it is {size} bytes, more than the {limit} bytes a {what} may have")]
    TooLarge { size: u64, limit: u64, what: &'static str },
}

impl From<BoundedReadError> for std::io::Error {
    fn from(error: BoundedReadError) -> Self {
        match error {
            BoundedReadError::Io(e) => e,
            other => std::io::Error::other(other.to_string()),
        }
    }
}

/// Largest case or sweep file read, bytes: a case with a `[[cells.list]]` of 10⁴ cells takes about 1 MB.
pub const TEXT_INPUT_LIMIT: u64 = 8 << 20;

/// The bytes of the regular file `path`, refused when it holds more than `limit` bytes; `what` names the
/// kind of file in the message (e.g. "case file").
pub fn read_bounded(path: &Path, limit: u64, what: &'static str) -> Result<Vec<u8>, BoundedReadError> {
    let metadata = std::fs::metadata(path)?;
    if !metadata.is_file() {
        return Err(BoundedReadError::NotRegular);
    }
    if metadata.len() > limit {
        return Err(BoundedReadError::TooLarge { size: metadata.len(), limit, what });
    }
    // The file may grow between the check and the read: read at most one byte more than the limit.
    let mut bytes = Vec::with_capacity(metadata.len() as usize);
    std::fs::File::open(path)?.take(limit + 1).read_to_end(&mut bytes)?;
    if bytes.len() as u64 > limit {
        return Err(BoundedReadError::TooLarge { size: bytes.len() as u64, limit, what });
    }
    Ok(bytes)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn refuses_devices_folders_and_large_files() {
        let dir = tempfile::tempdir().unwrap();
        assert!(matches!(read_bounded(dir.path(), 10, "x"), Err(BoundedReadError::NotRegular)));
        assert!(matches!(read_bounded(Path::new("/dev/zero"), 10, "x"), Err(BoundedReadError::NotRegular)));
        let file = dir.path().join("f");
        std::fs::write(&file, b"0123456789A").unwrap();
        assert!(matches!(read_bounded(&file, 10, "x"), Err(BoundedReadError::TooLarge { size: 11, .. })));
        assert_eq!(read_bounded(&file, 11, "x").unwrap(), b"0123456789A");
    }
}
