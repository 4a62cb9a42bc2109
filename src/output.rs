//! Atomic, deterministic file output shared by every stage that writes files.
//!
//! A nightly job can be killed at any moment; readers must then see either the old file or the
//! new one, never half of one. Every output goes through [`write_atomic`]: the bytes land in a
//! temporary file in the same folder, are flushed to disk, and the file is renamed into place.
//!
//! ```
//! let dir = tempfile::tempdir().unwrap();
//! let path = dir.path().join("a.txt");
//! dwarfbound::output::write_atomic(&path, b"hello\n").unwrap();
//! assert_eq!(std::fs::read(&path).unwrap(), b"hello\n");
//! ```

use std::io::Write;
use std::path::{Path, PathBuf};

/// A failure to write an output file, with the path that failed.
#[derive(Debug, thiserror::Error)]
#[error("cannot write {path}: {source}")]
pub struct OutputError {
    /// The file or folder that could not be written.
    pub path: PathBuf,
    /// The underlying I/O error.
    #[source]
    pub source: std::io::Error,
}

impl OutputError {
    /// Wraps an I/O error with the path it concerns.
    pub fn new(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Self {
            path: path.into(),
            source,
        }
    }
}

/// Writes `bytes` to `path` atomically (temporary file in the same folder, fsync, rename).
/// Creates the parent folder if needed.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<(), OutputError> {
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    std::fs::create_dir_all(&dir).map_err(|e| OutputError::new(&dir, e))?;
    // A temporary name of our own in the same folder (so the rename is atomic), created with
    // the default permissions: the user's umask applies, as for any other file they write.
    static COUNTER: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| "output".into());
    let (mut file, tmp) = loop {
        let n = COUNTER.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        let tmp = dir.join(format!(".{name}.{}.{n}.tmp", std::process::id()));
        match std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&tmp)
        {
            Ok(f) => break (f, tmp),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(OutputError::new(&dir, e)),
        }
    };
    let written = file
        .write_all(bytes)
        .and_then(|_| file.sync_all())
        .and_then(|_| std::fs::rename(&tmp, path));
    if let Err(e) = written {
        let _ = std::fs::remove_file(&tmp);
        return Err(OutputError::new(path, e));
    }
    Ok(())
}

/// Formats a float so that it round-trips exactly (Rust's shortest representation), or an empty
/// string for a missing value. NaN and infinities never reach an output file.
pub fn fmt_f64(x: Option<f64>) -> String {
    match x {
        // −0 prints as 0: the sign of a zero carries no information in a table.
        Some(v) if v.is_finite() => format!("{}", if v == 0.0 { 0.0 } else { v }),
        _ => String::new(),
    }
}
