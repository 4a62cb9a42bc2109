//! A content-addressed cache for theory grids, so that a nightly run with unchanged theory
//! reuses last night's bounds instead of solving the structure equations again.
//!
//! The key is a SHA-256 of everything that determines the grid (theory settings, grid axes,
//! tool version), supplied by the caller as a canonical string. Each entry stores the SHA-256
//! of its payload; an entry that is truncated, corrupt or partial is detected, removed and
//! rebuilt, never trusted. Entries are written atomically.
//!
//! ```
//! use dwarfbound::pipeline::cache::{Cache, Lookup};
//! let dir = tempfile::tempdir().unwrap();
//! let cache = Cache::new(dir.path());
//! let key = Cache::key("grid v1 upsilon=-0.3:0.6:91");
//! assert!(matches!(cache.load(&key), Lookup::Missing));
//! cache.store(&key, b"payload").unwrap();
//! assert!(matches!(cache.load(&key), Lookup::Hit(b) if b == b"payload"));
//! ```

use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};

use crate::output::{write_atomic, OutputError};

const MAGIC: &[u8] = b"dwarfbound-cache-1\n";

/// Lowercase hex of bytes.
pub fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// SHA-256 of bytes, as lowercase hex.
pub fn sha256_hex(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

/// What a cache lookup found.
#[derive(Debug)]
pub enum Lookup {
    /// A verified entry.
    Hit(Vec<u8>),
    /// No entry under this key.
    Missing,
    /// An entry existed but failed verification; it has been removed. The text says why.
    Corrupt(String),
}

/// A cache folder.
#[derive(Debug, Clone)]
pub struct Cache {
    dir: PathBuf,
}

impl Cache {
    /// A cache in `dir` (created on first store).
    pub fn new(dir: &Path) -> Cache {
        Cache {
            dir: dir.to_path_buf(),
        }
    }

    /// The key for a canonical description of everything that determines the entry.
    pub fn key(description: &str) -> String {
        sha256_hex(description.as_bytes())
    }

    fn path(&self, key: &str) -> PathBuf {
        self.dir.join(format!("{key}.theory"))
    }

    /// Looks an entry up and verifies its checksum.
    pub fn load(&self, key: &str) -> Lookup {
        let path = self.path(key);
        let bytes = match std::fs::read(&path) {
            Ok(b) => b,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Lookup::Missing,
            Err(e) => return Lookup::Corrupt(format!("unreadable: {e}")),
        };
        let verdict = (|| {
            let rest = bytes.strip_prefix(MAGIC).ok_or("wrong header")?;
            let nl = rest
                .iter()
                .position(|&b| b == b'\n')
                .ok_or("no checksum line")?;
            let (sum, payload) = (&rest[..nl], &rest[nl + 1..]);
            if sum != sha256_hex(payload).as_bytes() {
                return Err("checksum mismatch (truncated or modified)");
            }
            Ok(payload.to_vec())
        })();
        match verdict {
            Ok(p) => Lookup::Hit(p),
            Err(why) => {
                let _ = std::fs::remove_file(&path);
                Lookup::Corrupt(format!("{}: {why}", path.display()))
            }
        }
    }

    /// Stores an entry atomically.
    pub fn store(&self, key: &str, payload: &[u8]) -> Result<(), OutputError> {
        let mut bytes = Vec::with_capacity(payload.len() + 100);
        bytes.extend_from_slice(MAGIC);
        bytes.extend_from_slice(sha256_hex(payload).as_bytes());
        bytes.push(b'\n');
        bytes.extend_from_slice(payload);
        write_atomic(&self.path(key), &bytes)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn corrupt_entries_are_detected_and_removed() {
        let dir = tempfile::tempdir().unwrap();
        let cache = Cache::new(dir.path());
        let key = Cache::key("k");
        cache.store(&key, b"0123456789").unwrap();
        let p = cache.path(&key);
        let mut b = std::fs::read(&p).unwrap();
        b.truncate(b.len() - 3);
        std::fs::write(&p, &b).unwrap();
        assert!(matches!(cache.load(&key), Lookup::Corrupt(_)));
        assert!(matches!(cache.load(&key), Lookup::Missing));
    }

    #[test]
    fn sha256_of_empty_input_matches_fips_180_4() {
        // FIPS 180-4 test vector (SHA-256 of the empty string).
        assert_eq!(
            sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }
}
