//! A small self-checking binary file of `f64` values, for the restart data of a transient run (the checkpoint
//! and the fields of output times already reached). The values are stored bit for bit, so a run continued
//! from them repeats the arithmetic of an uninterrupted one.
//!
//! ```text
//! "PLUMEFIELD-RECORD 1\n"   magic line
//! <kind>\n                  what the file holds, e.g. "checkpoint"
//! <tag>\n                   who it belongs to (the SHA-256 of the case text)
//! u64 LE                    number of values n
//! n × f64 LE                the values
//! 32 bytes                  SHA-256 of everything above (damage or truncation shows)
//! ```
//!
//! Files are written atomically (temporary file, then rename: [`super::atomic`]).

use std::path::Path;

use sha2::{Digest, Sha256};

use super::atomic::write_atomic;

const MAGIC: &[u8] = b"PLUMEFIELD-RECORD 1\n";

/// A record read back.
#[derive(Clone, Debug, PartialEq)]
pub struct Record {
    pub tag: String,
    pub values: Vec<f64>,
}

/// Why a record cannot be read.
#[derive(Debug, thiserror::Error)]
pub enum RecordError {
    #[error("cannot read {path}: {error}")]
    Read { path: String, error: std::io::Error },
    #[error("{path} is not a plumefield {kind} file or is damaged ({what})")]
    Damaged { path: String, kind: String, what: &'static str },
}

/// The bytes of a record.
pub fn record_bytes(kind: &str, tag: &str, values: &[f64]) -> Vec<u8> {
    let mut bytes = Vec::with_capacity(MAGIC.len() + kind.len() + tag.len() + 42 + 8 * values.len());
    bytes.extend_from_slice(MAGIC);
    bytes.extend_from_slice(kind.replace('\n', " ").as_bytes());
    bytes.push(b'\n');
    bytes.extend_from_slice(tag.replace('\n', " ").as_bytes());
    bytes.push(b'\n');
    bytes.extend_from_slice(&(values.len() as u64).to_le_bytes());
    for v in values {
        bytes.extend_from_slice(&v.to_le_bytes());
    }
    let digest = Sha256::digest(&bytes);
    bytes.extend_from_slice(&digest);
    bytes
}

/// Writes a record atomically.
pub fn write_record(path: &Path, kind: &str, tag: &str, values: &[f64]) -> std::io::Result<()> {
    write_atomic(path, &record_bytes(kind, tag, values))
}

/// Reads a record of `kind`, checking its digest.
pub fn read_record(path: &Path, kind: &str) -> Result<Record, RecordError> {
    let bytes =
        std::fs::read(path).map_err(|error| RecordError::Read { path: path.display().to_string(), error })?;
    parse_record(&bytes, kind).map_err(|what| RecordError::Damaged {
        path: path.display().to_string(),
        kind: kind.to_string(),
        what,
    })
}

fn parse_record(bytes: &[u8], kind: &str) -> Result<Record, &'static str> {
    if bytes.len() < MAGIC.len() + 32 || !bytes.starts_with(MAGIC) {
        return Err("wrong header");
    }
    let (body, digest) = bytes.split_at(bytes.len() - 32);
    if Sha256::digest(body).as_slice() != digest {
        return Err("checksum mismatch");
    }
    let rest = &body[MAGIC.len()..];
    let mut lines = rest.splitn(3, |&b| b == b'\n');
    let found_kind = lines.next().ok_or("no kind")?;
    let tag = lines.next().ok_or("no tag")?;
    let data = lines.next().ok_or("no data")?;
    if found_kind != kind.as_bytes() {
        return Err("another kind of file");
    }
    let tag = String::from_utf8(tag.to_vec()).map_err(|_| "tag is not text")?;
    if data.len() < 8 {
        return Err("too short");
    }
    let (count, values) = data.split_at(8);
    let mut count_bytes = [0u8; 8];
    count_bytes.copy_from_slice(count);
    let n = u64::from_le_bytes(count_bytes);
    if values.len() as u64 != n.saturating_mul(8) {
        return Err("wrong length");
    }
    let values = values
        .chunks_exact(8)
        .map(|c| {
            let mut b = [0u8; 8];
            b.copy_from_slice(c);
            f64::from_le_bytes(b)
        })
        .collect();
    Ok(Record { tag, values })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip_keeps_every_bit_and_damage_shows() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("r.bin");
        let values = vec![1.0 / 3.0, f64::NAN, -0.0, f64::INFINITY, 1e-310];
        write_record(&path, "checkpoint", "abc", &values).unwrap();
        let r = read_record(&path, "checkpoint").unwrap();
        assert_eq!(r.tag, "abc");
        let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&r.values), bits(&values));
        assert!(read_record(&path, "output").is_err());
        let mut bytes = std::fs::read(&path).unwrap();
        let middle = bytes.len() / 2;
        bytes[middle] ^= 1;
        std::fs::write(&path, &bytes).unwrap();
        assert!(matches!(read_record(&path, "checkpoint"), Err(RecordError::Damaged { .. })));
        bytes.truncate(middle);
        std::fs::write(&path, &bytes).unwrap();
        assert!(read_record(&path, "checkpoint").is_err());
    }
}
