//! Optional signing of a provenance record with an organisation's ed25519 key (RFC 8032).
//!
//! The signature covers the exact bytes of `provenance.json` and is kept beside it in
//! `provenance.json.sig` (JSON, schema `popgauge.signature/1`), with the signer's public key so
//! that a record signed by another key is told apart from an edited one. Keys are PEM files:
//! the private key PKCS#8 (RFC 5958), the public key SubjectPublicKeyInfo (RFC 8410), so they
//! can also be made and kept with an organisation's usual tools.

use std::path::{Path, PathBuf};

use ed25519_dalek::pkcs8::spki::der::pem::LineEnding;
use ed25519_dalek::pkcs8::{DecodePrivateKey, DecodePublicKey, EncodePrivateKey, EncodePublicKey};
use ed25519_dalek::{Signature, Signer, SigningKey, Verifier, VerifyingKey};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

use crate::hash::sha256_hex;

/// Schema identifier of a signature file.
pub const SIGNATURE_SCHEMA: &str = "popgauge.signature/1";

/// The signature file beside a record.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
#[schemars(title = "popgauge signature of a provenance record (provenance.json.sig)")]
pub struct SignatureFile {
    /// `popgauge.signature/1`.
    pub schema: String,
    /// Always `ed25519`.
    pub algorithm: String,
    /// The file signed, relative to this one (`provenance.json`).
    pub signed: String,
    /// SHA-256 of the signed bytes, for reading; the signature is over the bytes themselves.
    pub sha256: String,
    /// The signer's public key, 32 bytes in hex.
    pub public_key: String,
    /// The signature, 64 bytes in hex.
    pub signature: String,
}

/// Why a key could not be made or used, or a record not signed.
#[derive(Debug, thiserror::Error)]
pub enum SignatureError {
    /// A file cannot be read.
    #[error("{path}: cannot be read: {message}\n  help: {help}")]
    Unreadable {
        /// The file.
        path: String,
        /// Why.
        message: String,
        /// What to do.
        help: &'static str,
    },
    /// A key file that is not an ed25519 key of the expected kind.
    #[error(
        "{path}: not an ed25519 {kind} key in PEM form ({message})\n  help: make a key pair with `popgauge keygen NAME` (NAME.key is private, NAME.pub public)"
    )]
    BadKey {
        /// The file.
        path: String,
        /// `private` or `public`.
        kind: &'static str,
        /// The parser's message.
        message: String,
    },
    /// A file that would be replaced.
    #[error("{path} exists already\n  help: {help}")]
    Exists {
        /// The file.
        path: String,
        /// What to do.
        help: &'static str,
    },
    /// A file cannot be written.
    #[error("{path}: cannot be written: {message}\n  help: check that the folder exists and is writable")]
    Write {
        /// The file.
        path: String,
        /// Why.
        message: String,
    },
    /// The system gave no randomness for a new key.
    #[error(
        "no random bytes from the operating system for a new key: {0}\n  help: try again; on a minimal system, check that /dev/urandom is readable"
    )]
    Random(String),
}

/// What checking a record's signature found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum SignatureCheck {
    /// Made by the given key over these exact bytes.
    Valid {
        /// The public key in hex.
        public_key: String,
    },
    /// No signature file beside the record.
    Missing {
        /// Where it was looked for.
        path: PathBuf,
    },
    /// A signature file that cannot be read or parsed.
    Unreadable {
        /// The file.
        path: PathBuf,
        /// Why.
        message: String,
    },
    /// Signed by another key than the one given.
    OtherKey {
        /// The key in the signature file (hex).
        found: String,
        /// The key given (hex).
        expected: String,
    },
    /// The given key's signature does not match the record's bytes.
    Mismatch,
}

/// The signature file of a record: `provenance.json.sig` beside `provenance.json`.
pub fn signature_path(record: &Path) -> PathBuf {
    let mut name = record.file_name().map(|n| n.to_os_string()).unwrap_or_else(|| "provenance.json".into());
    name.push(".sig");
    record.with_file_name(name)
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

fn unhex<const N: usize>(text: &str) -> Option<[u8; N]> {
    let text = text.trim();
    if text.len() != 2 * N || !text.is_ascii() {
        return None;
    }
    let mut out = [0u8; N];
    for (i, byte) in out.iter_mut().enumerate() {
        *byte = u8::from_str_radix(&text[2 * i..2 * i + 2], 16).ok()?;
    }
    Some(out)
}

fn read_text(path: &Path, help: &'static str) -> Result<String, SignatureError> {
    std::fs::read_to_string(path).map_err(|e| SignatureError::Unreadable {
        path: path.display().to_string(),
        message: e.to_string(),
        help,
    })
}

/// Makes a key pair and writes `PREFIX.key` (private, readable by the owner only) and
/// `PREFIX.pub`; refuses to replace either. Returns both paths.
///
/// # Errors
/// [`SignatureError::Exists`], [`SignatureError::Write`] or [`SignatureError::Random`].
pub fn generate_key_pair(prefix: &Path) -> Result<(PathBuf, PathBuf), SignatureError> {
    let private_path = PathBuf::from(format!("{}.key", prefix.display()));
    let public_path = PathBuf::from(format!("{}.pub", prefix.display()));
    for path in [&private_path, &public_path] {
        if path.exists() {
            let help = "choose another NAME; an existing key is never replaced";
            return Err(SignatureError::Exists { path: path.display().to_string(), help });
        }
    }
    let mut seed = [0u8; 32];
    getrandom::fill(&mut seed).map_err(|e| SignatureError::Random(e.to_string()))?;
    let key = SigningKey::from_bytes(&seed);
    seed.fill(0);
    let write_error = |path: &Path, e: &dyn std::fmt::Display| SignatureError::Write {
        path: path.display().to_string(),
        message: e.to_string(),
    };
    let private_pem = key.to_pkcs8_pem(LineEnding::LF).map_err(|e| write_error(&private_path, &e))?;
    let public_pem =
        key.verifying_key().to_public_key_pem(LineEnding::LF).map_err(|e| write_error(&public_path, &e))?;
    write_new(&private_path, private_pem.as_bytes(), true).map_err(|e| write_error(&private_path, &e))?;
    write_new(&public_path, public_pem.as_bytes(), false).map_err(|e| write_error(&public_path, &e))?;
    Ok((private_path, public_path))
}

/// Creates a file that must not exist yet; `private` makes it readable by the owner only.
fn write_new(path: &Path, bytes: &[u8], private: bool) -> std::io::Result<()> {
    use std::io::Write;
    let mut options = std::fs::OpenOptions::new();
    options.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        options.mode(if private { 0o600 } else { 0o644 });
    }
    #[cfg(not(unix))]
    let _ = private;
    options.open(path)?.write_all(bytes)
}

/// Signs the record at `record` with the private key in `key` and writes the signature file
/// beside it (through a temporary file, so a failure leaves no partial signature). An existing
/// signature is replaced only with `force`.
///
/// # Errors
/// An unreadable record or key, a key that is not an ed25519 private key, an existing
/// signature without `force`, or a write failure.
pub fn sign_record(record: &Path, key: &Path, force: bool) -> Result<PathBuf, SignatureError> {
    let bytes = std::fs::read(record).map_err(|e| SignatureError::Unreadable {
        path: record.display().to_string(),
        message: e.to_string(),
        help: "give the provenance.json of a popgauge output folder (or the folder)",
    })?;
    let pem = read_text(key, "give the private key file (NAME.key from `popgauge keygen NAME`)")?;
    let signing = SigningKey::from_pkcs8_pem(&pem).map_err(|e| SignatureError::BadKey {
        path: key.display().to_string(),
        kind: "private",
        message: e.to_string(),
    })?;
    let target = signature_path(record);
    if target.exists() && !force {
        let help = "the record is signed already; pass --force to replace the signature";
        return Err(SignatureError::Exists { path: target.display().to_string(), help });
    }
    let file = SignatureFile {
        schema: SIGNATURE_SCHEMA.into(),
        algorithm: "ed25519".into(),
        signed: record.file_name().map_or_else(|| "provenance.json".into(), |n| n.to_string_lossy().into_owned()),
        sha256: sha256_hex(&bytes),
        public_key: hex(signing.verifying_key().as_bytes()),
        signature: hex(&signing.sign(&bytes).to_bytes()),
    };
    let write_error = |e: &dyn std::fmt::Display| SignatureError::Write {
        path: target.display().to_string(),
        message: e.to_string(),
    };
    let mut json = serde_json::to_vec_pretty(&file).map_err(|e| write_error(&e))?;
    json.push(b'\n');
    let folder = target.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let mut temporary = tempfile::NamedTempFile::new_in(folder).map_err(|e| write_error(&e))?;
    std::io::Write::write_all(&mut temporary, &json).map_err(|e| write_error(&e))?;
    temporary.persist(&target).map_err(|e| write_error(&e.error))?;
    Ok(target)
}

/// Reads a public key file.
///
/// # Errors
/// An unreadable file, or one that is not an ed25519 public key.
pub fn read_public_key(path: &Path) -> Result<VerifyingKey, SignatureError> {
    let pem = read_text(path, "give the public key file (NAME.pub from `popgauge keygen NAME`)")?;
    VerifyingKey::from_public_key_pem(&pem).map_err(|e| SignatureError::BadKey {
        path: path.display().to_string(),
        kind: "public",
        message: e.to_string(),
    })
}

/// Checks the signature beside `record` against `key`.
pub fn check_signature(record: &Path, key: &VerifyingKey) -> SignatureCheck {
    let path = signature_path(record);
    let text = match std::fs::read_to_string(&path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return SignatureCheck::Missing { path },
        Err(e) => return SignatureCheck::Unreadable { path, message: e.to_string() },
        Ok(text) => text,
    };
    let file: SignatureFile = match serde_json::from_str(&text) {
        Err(e) => return SignatureCheck::Unreadable { path, message: e.to_string() },
        Ok(file) => file,
    };
    let expected = hex(key.as_bytes());
    if file.public_key != expected {
        return SignatureCheck::OtherKey { found: file.public_key, expected };
    }
    let Some(signature) = unhex::<64>(&file.signature).map(|b| Signature::from_bytes(&b)) else {
        return SignatureCheck::Unreadable { path, message: "`signature` is not 64 bytes in hex".into() };
    };
    match std::fs::read(record) {
        Ok(bytes) if key.verify(&bytes, &signature).is_ok() => SignatureCheck::Valid { public_key: expected },
        Ok(_) => SignatureCheck::Mismatch,
        Err(e) => SignatureCheck::Unreadable { path: record.to_path_buf(), message: e.to_string() },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// RFC 8032 section 7.1, TEST 1: the public key of secret key `9d61…7f60` and its
    /// signature of the empty message (values from memory of the RFC; exact match required).
    #[test]
    fn signs_as_rfc_8032_test_1() {
        let secret = unhex::<32>("9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60").unwrap();
        let key = SigningKey::from_bytes(&secret);
        assert_eq!(
            hex(key.verifying_key().as_bytes()),
            "d75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a"
        );
        assert_eq!(
            hex(&key.sign(b"").to_bytes()),
            "e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bacc61e39701cf9b46bd25bf5f0595bbe24655141438e7a100b"
        );
    }

    #[test]
    fn hex_round_trips_and_refuses_bad_text() {
        assert_eq!(unhex::<2>("0aff"), Some([0x0a, 0xff]));
        assert_eq!(unhex::<2>("0af"), None);
        assert_eq!(unhex::<2>("0agf"), None);
        assert_eq!(hex(&[0x0a, 0xff]), "0aff");
    }

    #[test]
    fn a_signed_record_checks_and_an_edited_one_does_not() {
        let dir = tempfile::tempdir().unwrap();
        let (private, public) = generate_key_pair(&dir.path().join("org")).unwrap();
        let record = dir.path().join("provenance.json");
        std::fs::write(&record, b"{\"schema\":\"x\"}\n").unwrap();
        let sig = sign_record(&record, &private, false).unwrap();
        assert_eq!(sig, dir.path().join("provenance.json.sig"));
        let key = read_public_key(&public).unwrap();
        assert!(matches!(check_signature(&record, &key), SignatureCheck::Valid { .. }));
        assert!(matches!(sign_record(&record, &private, false), Err(SignatureError::Exists { .. })));
        std::fs::write(&record, b"{\"schema\":\"y\"}\n").unwrap();
        assert_eq!(check_signature(&record, &key), SignatureCheck::Mismatch);
        let (_, other) = generate_key_pair(&dir.path().join("other")).unwrap();
        assert!(matches!(check_signature(&record, &read_public_key(&other).unwrap()), SignatureCheck::OtherKey { .. }));
        assert!(matches!(generate_key_pair(&dir.path().join("org")), Err(SignatureError::Exists { .. })));
        assert!(matches!(read_public_key(&private), Err(SignatureError::BadKey { kind: "public", .. })));
        std::fs::remove_file(&sig).unwrap();
        assert!(matches!(check_signature(&record, &key), SignatureCheck::Missing { .. }));
    }
}
