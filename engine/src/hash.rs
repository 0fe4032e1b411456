//! SHA-256 of files, canonical JSON and seed derivation.

use std::io::Read;
use std::sync::Arc;
use std::sync::atomic::{AtomicU64, Ordering};

use serde::Serialize;
use sha2::{Digest, Sha256};

use popgauge_abi::Seed;

/// Size and SHA-256 of some bytes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FileDigest {
    /// Lower-case hex SHA-256.
    pub sha256: String,
    /// Size in bytes.
    pub size: u64,
}

/// Lower-case hex SHA-256 of `bytes`.
pub fn sha256_hex(bytes: &[u8]) -> String {
    to_hex(&Sha256::digest(bytes))
}

fn to_hex(digest: &[u8]) -> String {
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

/// A reader that hashes every byte it passes on, so that a file read as a stream (a VCF file)
/// is hashed exactly as parsed, without holding it in memory.
#[derive(Debug)]
pub struct DigestingReader<R> {
    inner: R,
    hasher: Sha256,
    read: Arc<AtomicU64>,
}

impl<R: Read> DigestingReader<R> {
    /// Wraps `inner`.
    pub fn new(inner: R) -> Self {
        DigestingReader { inner, hasher: Sha256::new(), read: Arc::new(AtomicU64::new(0)) }
    }

    /// A counter of the bytes read so far, readable while the reader is owned elsewhere (for
    /// progress).
    pub fn counter(&self) -> Arc<AtomicU64> {
        Arc::clone(&self.read)
    }

    /// Reads whatever the parser left unread and returns the digest of the whole stream.
    ///
    /// # Errors
    /// An I/O error while reading the rest.
    pub fn finish(mut self) -> std::io::Result<FileDigest> {
        std::io::copy(&mut self, &mut std::io::sink())?;
        Ok(FileDigest { sha256: to_hex(&self.hasher.finalize()), size: self.read.load(Ordering::Relaxed) })
    }
}

impl<R: Read> Read for DigestingReader<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.hasher.update(&buf[..n]);
        self.read.fetch_add(n as u64, Ordering::Relaxed);
        Ok(n)
    }
}

/// Digest of bytes already read (so the hash is of exactly what was parsed).
pub fn digest_bytes(bytes: &[u8]) -> FileDigest {
    FileDigest { sha256: sha256_hex(bytes), size: bytes.len() as u64 }
}

/// The canonical serialisation that result and parameter hashes are taken over: compact JSON
/// with object keys in a fixed order (struct order, or sorted for maps) and numbers written as
/// the shortest text that reads back to the same value.
///
/// # Errors
/// Only if `value` cannot be serialised as JSON, which for popgauge's own types does not happen.
pub fn canonical_json<T: Serialize>(value: &T) -> Result<Vec<u8>, serde_json::Error> {
    // Through `Value` first: with `preserve_order` off for maps built here, keys of any map
    // are emitted sorted, whatever order the source used.
    let value = serde_json::to_value(value)?;
    serde_json::to_vec(&sort_keys(value))
}

fn sort_keys(value: serde_json::Value) -> serde_json::Value {
    use serde_json::Value;
    match value {
        Value::Object(map) => {
            let mut entries: Vec<(String, Value)> = map.into_iter().collect();
            entries.sort_by(|a, b| a.0.cmp(&b.0));
            Value::Object(entries.into_iter().map(|(k, v)| (k, sort_keys(v))).collect())
        }
        Value::Array(items) => Value::Array(items.into_iter().map(sort_keys).collect()),
        other => other,
    }
}

/// SHA-256 of the canonical JSON of `value`.
///
/// # Errors
/// As [`canonical_json`].
pub fn hash_canonical<T: Serialize>(value: &T) -> Result<String, serde_json::Error> {
    Ok(sha256_hex(&canonical_json(value)?))
}

/// A step's seed: the first eight bytes (little-endian) of SHA-256 over a fixed tag, the master
/// seed and the step id, so steps get independent streams and reordering steps keeps each one's.
pub fn derive_seed(master: u64, step_id: &str) -> Seed {
    let mut hasher = Sha256::new();
    hasher.update(b"popgauge-step-seed\0");
    hasher.update(master.to_le_bytes());
    hasher.update(step_id.as_bytes());
    let digest = hasher.finalize();
    let mut first = [0u8; 8];
    first.copy_from_slice(&digest[..8]);
    Seed(u64::from_le_bytes(first))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_known_input() {
        // FIPS 180-2 appendix B.1 test vector ("abc").
        assert_eq!(sha256_hex(b"abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    }

    #[test]
    fn digesting_reader_hashes_the_unread_rest_too() {
        let mut reader = DigestingReader::new(&b"abc"[..]);
        let mut first = [0u8; 1];
        reader.read_exact(&mut first).unwrap();
        let counter = reader.counter();
        assert_eq!(counter.load(Ordering::Relaxed), 1);
        // Same FIPS 180-2 vector as above: the digest covers all three bytes.
        assert_eq!(reader.finish().unwrap(), digest_bytes(b"abc"));
    }

    #[test]
    fn canonical_json_sorts_keys_and_keeps_numbers() {
        let a: serde_json::Value = serde_json::from_str(r#"{"b":1.50,"a":[{"d":2,"c":0.1}]}"#).unwrap();
        assert_eq!(String::from_utf8(canonical_json(&a).unwrap()).unwrap(), r#"{"a":[{"c":0.1,"d":2}],"b":1.5}"#);
        let b: serde_json::Value = serde_json::from_str(r#"{"b":1.5000001,"a":[{"d":2,"c":0.1}]}"#).unwrap();
        assert_ne!(hash_canonical(&a).unwrap(), hash_canonical(&b).unwrap());
    }

    #[test]
    fn seeds_depend_on_master_and_id() {
        assert_eq!(derive_seed(7, "qc"), derive_seed(7, "qc"));
        assert_ne!(derive_seed(7, "qc"), derive_seed(8, "qc"));
        assert_ne!(derive_seed(7, "qc"), derive_seed(7, "ld"));
    }
}
