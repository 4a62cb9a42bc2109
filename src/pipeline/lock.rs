//! An exclusive lock on an output folder, so that two nightly runs never interleave their files.
//!
//! The lock is a file created with `create_new` (atomic on POSIX file systems) holding the
//! owner's process id. A lock whose owner no longer runs (a killed job) is stale and is taken
//! over, with a note, so that a crash never blocks the next night.
//!
//! ```
//! let dir = tempfile::tempdir().unwrap();
//! let lock = dwarfbound::pipeline::lock::FolderLock::acquire(dir.path(), false).unwrap();
//! assert!(dwarfbound::pipeline::lock::FolderLock::acquire(dir.path(), false).is_err());
//! drop(lock);
//! assert!(dwarfbound::pipeline::lock::FolderLock::acquire(dir.path(), false).is_ok());
//! ```

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Duration;

/// How long a lock file without a readable pid is respected before it is taken for stale.
const EMPTY_LOCK_GRACE: Duration = Duration::from_secs(2);

/// File name of the lock inside the locked folder.
pub const LOCK_FILE: &str = ".dwarfbound.lock";

/// Why a lock could not be taken.
#[derive(Debug, thiserror::Error)]
pub enum LockError {
    /// Another live process holds the lock.
    #[error("{path} is locked by another dwarfbound run (pid {pid}); wait for it, or pass --wait")]
    Held {
        /// The lock file.
        path: PathBuf,
        /// The holder's process id.
        pid: u32,
    },
    /// The lock file could not be created or read.
    #[error("cannot lock {path}: {source}")]
    Io {
        /// The lock file.
        path: PathBuf,
        /// The I/O error.
        #[source]
        source: std::io::Error,
    },
}

/// A held lock; released (file removed) on drop.
#[derive(Debug)]
pub struct FolderLock {
    path: PathBuf,
    /// Set when a stale lock of a dead process was taken over.
    pub took_over_from: Option<u32>,
}

fn process_alive(pid: u32) -> bool {
    // Linux: a live process has /proc/<pid>. Elsewhere assume alive (never steal a live lock).
    if Path::new("/proc/self").exists() {
        Path::new(&format!("/proc/{pid}")).exists()
    } else {
        true
    }
}

impl FolderLock {
    /// Takes the lock on `dir` (created if needed). With `wait`, polls until the holder is gone.
    pub fn acquire(dir: &Path, wait: bool) -> Result<FolderLock, LockError> {
        let path = dir.join(LOCK_FILE);
        let io = |source| LockError::Io {
            path: path.clone(),
            source,
        };
        std::fs::create_dir_all(dir).map_err(io)?;
        let mut took_over_from = None;
        loop {
            match std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&path)
            {
                Ok(mut f) => {
                    writeln!(f, "{}", std::process::id()).map_err(io)?;
                    f.sync_all().map_err(io)?;
                    return Ok(FolderLock {
                        path,
                        took_over_from,
                    });
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                    let text = std::fs::read_to_string(&path).unwrap_or_default();
                    let pid: u32 = text.trim().parse().unwrap_or(0);
                    // A file without a pid is either being written this instant or was left by
                    // a run killed between creating and writing it: stale once it is old.
                    let age = std::fs::metadata(&path)
                        .and_then(|m| m.modified())
                        .ok()
                        .and_then(|t| t.elapsed().ok())
                        .unwrap_or(EMPTY_LOCK_GRACE);
                    if pid == 0 && age < EMPTY_LOCK_GRACE {
                        // Give a live writer the moment it needs to write its pid.
                        std::thread::sleep(Duration::from_millis(100));
                        continue;
                    }
                    let unreadable_and_old = pid == 0;
                    if unreadable_and_old
                        || (pid != 0 && pid != std::process::id() && !process_alive(pid))
                    {
                        // Stale: the owner died without cleaning up. Remove and retry.
                        let _ = std::fs::remove_file(&path);
                        took_over_from = Some(pid);
                        continue;
                    }
                    if !wait {
                        return Err(LockError::Held { path, pid });
                    }
                    std::thread::sleep(Duration::from_millis(500));
                }
                Err(e) => return Err(io(e)),
            }
        }
    }
}

impl Drop for FolderLock {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.path);
    }
}
