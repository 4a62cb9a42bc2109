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
    let mut file = AtomicFile::create(path)?;
    file.write_all(bytes)
        .map_err(|e| OutputError::new(path, e))?;
    file.commit()
}

/// A file written atomically in pieces, for outputs too large to hold in memory (`objects.csv`
/// of a million objects): the writes go to a buffered temporary file in the same folder, and
/// [`AtomicFile::commit`] flushes it to disk and renames it into place, as [`write_atomic`]
/// does. Dropped without a commit, the temporary file is removed and the old file stays.
///
/// ```
/// use std::io::Write;
/// let dir = tempfile::tempdir().unwrap();
/// let path = dir.path().join("big.csv");
/// let mut f = dwarfbound::output::AtomicFile::create(&path).unwrap();
/// for k in 0..3 {
///     writeln!(f, "{k}").unwrap();
/// }
/// assert!(!path.exists());
/// f.commit().unwrap();
/// assert_eq!(std::fs::read_to_string(&path).unwrap(), "0\n1\n2\n");
/// ```
pub struct AtomicFile {
    path: PathBuf,
    tmp: PathBuf,
    file: Option<std::io::BufWriter<std::fs::File>>,
}

impl AtomicFile {
    /// Creates the temporary file beside `path` (and the parent folder if needed).
    pub fn create(path: &Path) -> Result<Self, OutputError> {
        let dir = match path.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        std::fs::create_dir_all(&dir).map_err(|e| OutputError::new(&dir, e))?;
        // A temporary name of our own in the same folder (so the rename is atomic), created
        // with the default permissions: the user's umask applies, as for any other file.
        static COUNTER: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
        let name = path
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_else(|| "output".into());
        loop {
            let n = COUNTER.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
            let tmp = dir.join(format!(".{name}.{}.{n}.tmp", std::process::id()));
            match std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&tmp)
            {
                Ok(f) => {
                    return Ok(Self {
                        path: path.to_path_buf(),
                        tmp,
                        file: Some(std::io::BufWriter::with_capacity(1 << 16, f)),
                    })
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
                Err(e) => return Err(OutputError::new(&dir, e)),
            }
        }
    }

    /// The final path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Everything written so far, read back from the temporary file (a nightly run compares
    /// its objects with the previous run's before the files are published).
    pub fn read_back(&mut self) -> Result<Vec<u8>, OutputError> {
        if let Some(f) = self.file.as_mut() {
            f.flush().map_err(|e| OutputError::new(&self.path, e))?;
        }
        std::fs::read(&self.tmp).map_err(|e| OutputError::new(&self.path, e))
    }

    /// Flushes, syncs and renames the file into place.
    pub fn commit(mut self) -> Result<(), OutputError> {
        let Some(w) = self.file.take() else {
            return Ok(());
        };
        let written = w
            .into_inner()
            .map_err(|e| e.into_error())
            .and_then(|f| f.sync_all())
            .and_then(|_| std::fs::rename(&self.tmp, &self.path));
        if let Err(e) = written {
            let _ = std::fs::remove_file(&self.tmp);
            return Err(OutputError::new(&self.path, e));
        }
        Ok(())
    }
}

impl Write for AtomicFile {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        match self.file.as_mut() {
            Some(f) => f.write(buf),
            None => Err(std::io::Error::other("file already committed")),
        }
    }

    fn write_all(&mut self, buf: &[u8]) -> std::io::Result<()> {
        match self.file.as_mut() {
            Some(f) => f.write_all(buf),
            None => Err(std::io::Error::other("file already committed")),
        }
    }

    fn flush(&mut self) -> std::io::Result<()> {
        match self.file.as_mut() {
            Some(f) => f.flush(),
            None => Ok(()),
        }
    }
}

impl Drop for AtomicFile {
    fn drop(&mut self) {
        if self.file.take().is_some() {
            let _ = std::fs::remove_file(&self.tmp);
        }
    }
}

/// Formats a float so that it round-trips exactly (Rust's shortest representation), or an empty
/// string for a missing value. NaN and infinities never reach an output file.
pub fn fmt_f64(x: Option<f64>) -> String {
    let mut s = String::new();
    push_f64(&mut s, x);
    s
}

/// Appends what [`fmt_f64`] returns to `buf`: the large tables format every number into one
/// reused buffer instead of a new string per cell.
pub fn push_f64(buf: &mut String, x: Option<f64>) {
    use std::fmt::Write;
    match x {
        // −0 prints as 0: the sign of a zero carries no information in a table.
        Some(v) if v.is_finite() => {
            // Writing into a String cannot fail.
            let _ = write!(buf, "{}", if v == 0.0 { 0.0 } else { v });
        }
        _ => {}
    }
}
