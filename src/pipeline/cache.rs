//! A content-addressed cache for theory grids, so that a nightly run with unchanged theory
//! reuses last night's bounds instead of solving the structure equations again.
//!
//! The caller describes everything that determines an entry (theory settings, grid axes, tool
//! version) as one canonical text; the key is its SHA-256. Each entry records that description
//! beside its payload, and the SHA-256 of both: an entry is served only when its checksum holds
//! *and* its recorded description equals the one asked for, byte for byte. So a truncated or
//! modified file, or a valid entry filed under another key (copied, renamed, or left by a
//! colliding tool), is detected, removed and reported with the reason, never trusted. Entries
//! are written atomically.
//!
//! ```
//! use dwarfbound::pipeline::cache::{Cache, Lookup};
//! let dir = tempfile::tempdir().unwrap();
//! let cache = Cache::new(dir.path());
//! let description = r#"{"upsilon":{"start":-0.3,"stop":0.6,"count":91}}"#;
//! let key = Cache::key(description);
//! assert!(matches!(cache.load(&key, description), Lookup::Missing));
//! cache.store(&key, description, b"payload").unwrap();
//! assert!(matches!(cache.load(&key, description), Lookup::Hit(b) if b == b"payload"));
//! ```

use sha2::{Digest, Sha256};
use std::path::{Path, PathBuf};

use crate::output::{write_atomic, OutputError};

/// First line of every entry. Version 2 records the description; a version-1 entry (which
/// did not) is refused as another format.
const MAGIC: &[u8] = b"dwarfbound-cache-2\n";

/// At most this many differing fields are named in a mismatch message (one line stays short).
const MAX_NAMED_DIFFERENCES: usize = 4;

/// Lowercase hex of bytes.
pub fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// SHA-256 of bytes, as lowercase hex.
pub fn sha256_hex(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

/// SHA-256 of everything `reader` yields, as lowercase hex ([`sha256_hex`] of the same bytes),
/// read a megabyte at a time: a catalogue's checksum without holding the file.
pub fn sha256_hex_of(mut reader: impl std::io::Read) -> std::io::Result<String> {
    use sha2::Digest as _;
    let mut hasher = Sha256::new();
    let mut buf = vec![0u8; 1 << 20];
    loop {
        match reader.read(&mut buf) {
            Ok(0) => return Ok(hex(&hasher.finalize())),
            Ok(n) => hasher.update(&buf[..n]),
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
}

/// What a cache lookup found.
#[derive(Debug)]
pub enum Lookup {
    /// A verified entry computed for exactly the description asked for.
    Hit(Vec<u8>),
    /// No entry under this key.
    Missing,
    /// An entry existed but failed verification (unreadable, wrong format, checksum); it has
    /// been removed. The text says why.
    Corrupt(String),
    /// An entry with a valid checksum, but computed for another description; it has been
    /// removed. The text names what differs.
    Mismatch(String),
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

    /// A cache in the subfolder `name` of this one: for entries that must not count against
    /// the theory grids' retention ([`Cache::prune`] looks at this folder's own entries only).
    pub fn subfolder(&self, name: &str) -> Cache {
        Cache {
            dir: self.dir.join(name),
        }
    }

    /// The key for a canonical description of everything that determines the entry.
    pub fn key(description: &str) -> String {
        sha256_hex(description.as_bytes())
    }

    /// The file an entry is stored in.
    pub fn entry_path(&self, key: &str) -> PathBuf {
        self.dir.join(format!("{key}.theory"))
    }

    /// Looks an entry up, verifies its checksum and that it was computed for `description`.
    /// An entry that fails either check is removed (the caller rebuilds it).
    pub fn load(&self, key: &str, description: &str) -> Lookup {
        let path = self.entry_path(key);
        let bytes = match std::fs::read(&path) {
            Ok(b) => b,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Lookup::Missing,
            Err(e) => return Lookup::Corrupt(format!("unreadable: {e}")),
        };
        let verdict = match parse_entry(&bytes) {
            Ok((recorded, payload)) if recorded == description.as_bytes() => {
                // Record the use, so that retention ([`Cache::prune`]) keeps entries by last
                // use rather than by first computation. Best effort: a read-only cache still
                // serves the entry.
                let _ = std::fs::File::options()
                    .write(true)
                    .open(&path)
                    .and_then(|f| f.set_modified(std::time::SystemTime::now()));
                return Lookup::Hit(payload.to_vec());
            }
            Ok((recorded, _)) => Lookup::Mismatch(describe_difference(
                &String::from_utf8_lossy(recorded),
                description,
            )),
            Err(why) => Lookup::Corrupt(why.to_string()),
        };
        let _ = std::fs::remove_file(&path);
        verdict
    }

    /// Stores an entry atomically, recording the description it was computed for.
    pub fn store(&self, key: &str, description: &str, payload: &[u8]) -> Result<(), OutputError> {
        let mut body = Vec::with_capacity(description.len() + payload.len() + 24);
        body.extend_from_slice(format!("{}\n", description.len()).as_bytes());
        body.extend_from_slice(description.as_bytes());
        body.extend_from_slice(payload);
        let mut bytes = Vec::with_capacity(body.len() + 100);
        bytes.extend_from_slice(MAGIC);
        bytes.extend_from_slice(sha256_hex(&body).as_bytes());
        bytes.push(b'\n');
        bytes.extend_from_slice(&body);
        write_atomic(&self.entry_path(key), &bytes)
    }
}

impl Cache {
    /// Keeps the `keep` most recently used entries (`protect`, the entry of the current run,
    /// always among them) and removes the others, least recently used first. Returns one line
    /// per entry removed or not removable. Files that are not entries are never touched.
    pub fn prune(&self, keep: usize, protect: Option<&str>) -> Vec<String> {
        let Ok(dir) = std::fs::read_dir(&self.dir) else {
            return Vec::new();
        };
        let protected = protect.map(|k| self.entry_path(k));
        let mut entries: Vec<(std::time::SystemTime, PathBuf)> = dir
            .filter_map(Result::ok)
            .map(|e| e.path())
            .filter(|p| {
                p.extension().is_some_and(|x| x == "theory")
                    && p.file_stem()
                        .and_then(|s| s.to_str())
                        .is_some_and(|s| s.len() == 64 && s.bytes().all(|b| b.is_ascii_hexdigit()))
            })
            .filter(|p| Some(p) != protected.as_ref())
            .map(|p| {
                let used = std::fs::metadata(&p)
                    .and_then(|m| m.modified())
                    .unwrap_or(std::time::UNIX_EPOCH);
                (used, p)
            })
            .collect();
        // Newest first; ties broken by name so the choice does not depend on listing order.
        entries.sort_by(|a, b| b.0.cmp(&a.0).then_with(|| a.1.cmp(&b.1)));
        let room = keep.saturating_sub(usize::from(protected.as_ref().is_some_and(|p| p.exists())));
        entries
            .iter()
            .skip(room)
            .rev()
            .map(|(_, p)| match std::fs::remove_file(p) {
                Ok(()) => format!(
                    "removed the theory cache entry {} (least recently used; keep {keep})",
                    p.display()
                ),
                Err(e) => format!(
                    "could not remove the theory cache entry {}: {e}",
                    p.display()
                ),
            })
            .collect()
    }
}

/// Splits a stored entry into (recorded description, payload) after checking its header and
/// checksum. Layout: the magic line, the SHA-256 (hex) of the rest, a newline, the byte length
/// of the description in decimal, a newline, the description, the payload.
fn parse_entry(bytes: &[u8]) -> Result<(&[u8], &[u8]), &'static str> {
    let rest = bytes
        .strip_prefix(MAGIC)
        .ok_or("wrong header (not a cache entry of this format)")?;
    let nl = rest
        .iter()
        .position(|&b| b == b'\n')
        .ok_or("no checksum line")?;
    let (sum, body) = (&rest[..nl], &rest[nl + 1..]);
    if sum != sha256_hex(body).as_bytes() {
        return Err("checksum mismatch (truncated or modified)");
    }
    let nl = body
        .iter()
        .position(|&b| b == b'\n')
        .ok_or("no description length")?;
    let len: usize = std::str::from_utf8(&body[..nl])
        .ok()
        .and_then(|s| s.parse().ok())
        .ok_or("unreadable description length")?;
    let rest = &body[nl + 1..];
    if len > rest.len() {
        return Err("description longer than the entry");
    }
    Ok(rest.split_at(len))
}

/// One line naming what differs between the description an entry was computed for and the one
/// asked for: the differing fields of two JSON descriptions (`path: entry has A, wanted B`), or
/// a plain statement when they are not JSON.
pub fn describe_difference(recorded: &str, wanted: &str) -> String {
    let parsed = (
        serde_json::from_str::<serde_json::Value>(recorded),
        serde_json::from_str::<serde_json::Value>(wanted),
    );
    let (Ok(a), Ok(b)) = parsed else {
        return "it was computed for another description".to_string();
    };
    let mut diffs = Vec::new();
    json_differences("", &a, &b, &mut diffs);
    if diffs.is_empty() {
        // Equal values written differently (e.g. key order): still not the same text.
        return "it was computed for an equivalent description written differently".to_string();
    }
    let more = diffs.len().saturating_sub(MAX_NAMED_DIFFERENCES);
    let mut text = format!(
        "it was computed for another grid or settings: {}",
        diffs[..diffs.len().min(MAX_NAMED_DIFFERENCES)].join("; ")
    );
    if more > 0 {
        text.push_str(&format!("; and {more} more"));
    }
    text
}

/// Appends `path: entry has A, wanted B` for every leaf where `a` and `b` differ (objects are
/// compared key by key; anything else as a whole).
fn json_differences(
    path: &str,
    a: &serde_json::Value,
    b: &serde_json::Value,
    out: &mut Vec<String>,
) {
    use serde_json::Value;
    if let (Value::Object(x), Value::Object(y)) = (a, b) {
        let keys: std::collections::BTreeSet<&String> = x.keys().chain(y.keys()).collect();
        for k in keys {
            let sub = if path.is_empty() {
                k.clone()
            } else {
                format!("{path}.{k}")
            };
            let null = Value::Null;
            json_differences(
                &sub,
                x.get(k).unwrap_or(&null),
                y.get(k).unwrap_or(&null),
                out,
            );
        }
    } else if a != b {
        let name = if path.is_empty() { "description" } else { path };
        out.push(format!("{name}: entry has {a}, wanted {b}"));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_streamed_checksum_is_the_checksum_of_the_bytes() {
        // FIPS 180-2's example "abc" (the standard's published digest), then lengths around
        // the megabyte the stream is read in.
        assert_eq!(
            sha256_hex_of(&b"abc"[..]).unwrap(),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        for n in [0, 1, (1 << 20) - 1, 1 << 20, (1 << 20) + 1, 3 << 20] {
            let bytes: Vec<u8> = (0..n).map(|i| (i * 7 % 251) as u8).collect();
            assert_eq!(
                sha256_hex_of(&bytes[..]).unwrap(),
                sha256_hex(&bytes),
                "{n}"
            );
        }
    }

    #[test]
    fn corrupt_entries_are_detected_and_removed() {
        let dir = tempfile::tempdir().unwrap();
        let cache = Cache::new(dir.path());
        let key = Cache::key("k");
        cache.store(&key, "k", b"0123456789").unwrap();
        let p = cache.entry_path(&key);
        let mut b = std::fs::read(&p).unwrap();
        b.truncate(b.len() - 3);
        std::fs::write(&p, &b).unwrap();
        assert!(matches!(cache.load(&key, "k"), Lookup::Corrupt(why) if why.contains("checksum")));
        assert!(matches!(cache.load(&key, "k"), Lookup::Missing));
    }

    #[test]
    fn an_entry_for_another_description_is_refused_with_the_difference() {
        // A valid entry (checksum holds) filed under the key of another grid: the situation of
        // a copied or renamed cache file.
        let dir = tempfile::tempdir().unwrap();
        let cache = Cache::new(dir.path());
        let d45 = r#"{"upsilon":{"start":-0.3,"stop":0.6,"count":45},"tau":{"count":13}}"#;
        let d46 = r#"{"upsilon":{"start":-0.3,"stop":0.6,"count":46},"tau":{"count":13}}"#;
        let (k45, k46) = (Cache::key(d45), Cache::key(d46));
        cache.store(&k45, d45, b"grid of 45").unwrap();
        std::fs::copy(cache.entry_path(&k45), cache.entry_path(&k46)).unwrap();
        match cache.load(&k46, d46) {
            Lookup::Mismatch(why) => {
                assert_eq!(
                    why,
                    "it was computed for another grid or settings: upsilon.count: entry has 45, wanted 46"
                );
            }
            other => panic!("expected a mismatch, got {other:?}"),
        }
        assert!(
            !cache.entry_path(&k46).exists(),
            "the wrong entry is removed"
        );
        assert!(matches!(cache.load(&k45, d45), Lookup::Hit(b) if b == b"grid of 45"));
    }

    #[test]
    fn entries_of_the_previous_format_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let cache = Cache::new(dir.path());
        let key = Cache::key("k");
        let payload = b"payload";
        let mut old = b"dwarfbound-cache-1\n".to_vec();
        old.extend_from_slice(sha256_hex(payload).as_bytes());
        old.push(b'\n');
        old.extend_from_slice(payload);
        std::fs::write(cache.entry_path(&key), old).unwrap();
        assert!(matches!(cache.load(&key, "k"), Lookup::Corrupt(why) if why.contains("header")));
    }

    #[test]
    fn prune_keeps_the_most_recently_used_entries_and_the_protected_one() {
        let dir = tempfile::tempdir().unwrap();
        let cache = Cache::new(dir.path());
        let keys: Vec<String> = (0..4).map(|i| Cache::key(&format!("d{i}"))).collect();
        let t0 = std::time::UNIX_EPOCH + std::time::Duration::from_secs(1_000_000);
        for (i, k) in keys.iter().enumerate() {
            cache.store(k, &format!("d{i}"), b"p").unwrap();
            // Entry i last used at t0 + i hours: 0 is the oldest.
            std::fs::File::options()
                .write(true)
                .open(cache.entry_path(k))
                .unwrap()
                .set_modified(t0 + std::time::Duration::from_secs(3600 * i as u64))
                .unwrap();
        }
        std::fs::write(dir.path().join("notes.txt"), "not an entry").unwrap();
        // Keep 2 with the oldest entry protected (the current run's): it and the newest stay.
        let notes = cache.prune(2, Some(&keys[0]));
        assert_eq!(notes.len(), 2, "{notes:?}");
        let left: Vec<bool> = keys.iter().map(|k| cache.entry_path(k).exists()).collect();
        assert_eq!(left, [true, false, false, true]);
        assert!(
            dir.path().join("notes.txt").exists(),
            "other files are never touched"
        );
        // A hit counts as a use: entry 0 becomes the most recent one.
        assert!(matches!(cache.load(&keys[0], "d0"), Lookup::Hit(_)));
        cache.prune(1, None);
        assert!(cache.entry_path(&keys[0]).exists());
        assert!(!cache.entry_path(&keys[3]).exists());
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
