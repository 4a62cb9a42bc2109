//! An exclusive lock on an output folder, so that two nightly runs never interleave their files.
//!
//! The lock is a file created with `create_new` (atomic on POSIX file systems) that records its
//! owner: host name, process id and the process's start time (field 22 of `/proc/<pid>/stat`,
//! in clock ticks since boot). A lock is stale, and taken over (the caller prints a note), when
//! it was written on this host and either no process has that id any more (a killed job) or
//! the process that has it started at another time (the id was reused after a reboot or a
//! wrap-around). A lock written on another host is never taken over automatically, since its
//! processes cannot be seen from here: the error names the host and the file to remove by
//! hand. With `--wait` the lock is re-examined at every poll, so a holder that dies or whose id
//! is reused never makes the wait endless.
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
    /// The lock was written by a process on another host, whose liveness cannot be checked here.
    #[error("{path} is locked by a dwarfbound run on host `{host}` (pid {pid}); it is never taken over automatically: if that run is dead, pass --break-lock or remove the file by hand")]
    OtherHost {
        /// The lock file.
        path: PathBuf,
        /// The holder's host name.
        host: String,
        /// The holder's process id on that host.
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

/// This machine's host name (`/proc/sys/kernel/hostname`, else `/etc/hostname`, else the
/// `HOSTNAME` variable); `None` when none is known.
fn host_name() -> Option<String> {
    ["/proc/sys/kernel/hostname", "/etc/hostname"]
        .iter()
        .find_map(|p| std::fs::read_to_string(p).ok())
        .or_else(|| std::env::var("HOSTNAME").ok())
        .map(|h| h.trim().to_string())
        .filter(|h| !h.is_empty())
}

/// Start time of a process in clock ticks since boot (field 22 of `/proc/<pid>/stat`); `None`
/// when the process does not exist or `/proc` is not there.
fn process_start(pid: u32) -> Option<u64> {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
    // The command name (field 2) is in parentheses and may contain spaces or ')'.
    let after = &stat[stat.rfind(')')? + 1..];
    // After the name: field 3 (state) is the first, so field 22 is the 20th.
    after.split_whitespace().nth(19)?.parse().ok()
}

fn process_alive(pid: u32) -> bool {
    // Linux: a live process has /proc/<pid>. Elsewhere assume alive (never steal a live lock).
    if Path::new("/proc/self").exists() {
        Path::new(&format!("/proc/{pid}")).exists()
    } else {
        true
    }
}

/// The owner recorded in a lock file.
#[derive(Debug, Default, PartialEq)]
struct Owner {
    pid: u32,
    host: Option<String>,
    start: Option<u64>,
}

impl Owner {
    fn me() -> Owner {
        let pid = std::process::id();
        Owner {
            pid,
            host: host_name(),
            start: process_start(pid),
        }
    }

    fn to_text(&self) -> String {
        let mut text = format!("pid = {}\n", self.pid);
        if let Some(h) = &self.host {
            text.push_str(&format!("host = {h}\n"));
        }
        if let Some(s) = self.start {
            text.push_str(&format!("start_ticks = {s}\n"));
        }
        text
    }

    /// Reads a lock file's text: `key = value` lines, or a bare pid (older locks).
    fn parse(text: &str) -> Owner {
        let mut owner = Owner::default();
        for line in text.lines() {
            let line = line.trim();
            match line.split_once('=') {
                Some((k, v)) => {
                    let v = v.trim();
                    match k.trim() {
                        "pid" => owner.pid = v.parse().unwrap_or(0),
                        "host" if !v.is_empty() => owner.host = Some(v.to_string()),
                        "start_ticks" => owner.start = v.parse().ok(),
                        _ => {}
                    }
                }
                None if !line.is_empty() => owner.pid = line.parse().unwrap_or(0),
                None => {}
            }
        }
        owner
    }
}

/// What to do with a lock held by `owner`, seen from `me`.
#[derive(Debug, PartialEq)]
enum Verdict {
    /// The owner runs (or may run): respect the lock.
    Live,
    /// Stale on this host: take it over.
    Stale,
    /// Written on another host: never taken over automatically.
    OtherHost(String),
}

fn judge(owner: &Owner, me: &Owner) -> Verdict {
    if let (Some(theirs), Some(mine)) = (&owner.host, &me.host) {
        if theirs != mine {
            return Verdict::OtherHost(theirs.clone());
        }
    }
    if owner.pid == me.pid && owner.start.is_some() && owner.start == me.start {
        // Our own lock (a second acquire in one process): respect it.
        return Verdict::Live;
    }
    if !process_alive(owner.pid) {
        return Verdict::Stale;
    }
    match (owner.start, process_start(owner.pid)) {
        (Some(recorded), Some(now)) if recorded != now => Verdict::Stale,
        _ => Verdict::Live,
    }
}

/// Removes the lock of `dir` whoever holds it (`--break-lock`: for a human who knows the holder
/// is dead, e.g. a run on another host); returns what the lock file said, if there was one.
pub fn break_lock(dir: &Path) -> Result<Option<String>, LockError> {
    let path = dir.join(LOCK_FILE);
    match std::fs::read_to_string(&path) {
        Ok(text) => {
            std::fs::remove_file(&path).map_err(|source| LockError::Io {
                path: path.clone(),
                source,
            })?;
            Ok(Some(text.trim().replace('\n', " ")))
        }
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        Err(source) => Err(LockError::Io { path, source }),
    }
}

/// Whether `dir` holds a lock file that must be respected: a live holder on this host, a
/// holder on another host (never judged from here), or a file so young that its writer may
/// still be writing its pid. `false` when there is no lock file or it is stale. Used to tell a
/// run folder being written from one left by a killed run.
pub fn is_held(dir: &Path) -> bool {
    let path = dir.join(LOCK_FILE);
    let Ok(text) = std::fs::read_to_string(&path) else {
        return false;
    };
    let owner = Owner::parse(&text);
    if owner.pid == 0 {
        let age = std::fs::metadata(&path)
            .and_then(|m| m.modified())
            .ok()
            .and_then(|t| t.elapsed().ok())
            .unwrap_or(EMPTY_LOCK_GRACE);
        return age < EMPTY_LOCK_GRACE;
    }
    judge(&owner, &Owner::me()) != Verdict::Stale
}

impl FolderLock {
    /// Takes the lock on `dir` (created if needed). With `wait`, polls until the holder is gone
    /// (or its lock turns out stale).
    pub fn acquire(dir: &Path, wait: bool) -> Result<FolderLock, LockError> {
        let path = dir.join(LOCK_FILE);
        let io = |source| LockError::Io {
            path: path.clone(),
            source,
        };
        std::fs::create_dir_all(dir).map_err(io)?;
        let me = Owner::me();
        let mut took_over_from = None;
        loop {
            match std::fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&path)
            {
                Ok(mut f) => {
                    f.write_all(me.to_text().as_bytes()).map_err(io)?;
                    f.sync_all().map_err(io)?;
                    return Ok(FolderLock {
                        path,
                        took_over_from,
                    });
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                    let text = std::fs::read_to_string(&path).unwrap_or_default();
                    let owner = Owner::parse(&text);
                    // A file without a pid is either being written this instant or was left by
                    // a run killed between creating and writing it: stale once it is old.
                    let age = std::fs::metadata(&path)
                        .and_then(|m| m.modified())
                        .ok()
                        .and_then(|t| t.elapsed().ok())
                        .unwrap_or(EMPTY_LOCK_GRACE);
                    if owner.pid == 0 && age < EMPTY_LOCK_GRACE {
                        // Give a live writer the moment it needs to write its pid.
                        std::thread::sleep(Duration::from_millis(100));
                        continue;
                    }
                    let verdict = if owner.pid == 0 {
                        Verdict::Stale
                    } else {
                        judge(&owner, &me)
                    };
                    match verdict {
                        Verdict::Stale => {
                            // The owner died (or its id now belongs to another process).
                            let _ = std::fs::remove_file(&path);
                            took_over_from = Some(owner.pid);
                            continue;
                        }
                        Verdict::OtherHost(host) => {
                            return Err(LockError::OtherHost {
                                path,
                                host,
                                pid: owner.pid,
                            })
                        }
                        Verdict::Live if !wait => {
                            return Err(LockError::Held {
                                path,
                                pid: owner.pid,
                            })
                        }
                        Verdict::Live => std::thread::sleep(Duration::from_millis(500)),
                    }
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn owner_text_round_trips_and_old_locks_parse() {
        let me = Owner::me();
        assert_eq!(Owner::parse(&me.to_text()), me);
        assert_eq!(Owner::parse("4242\n").pid, 4242);
        assert_eq!(Owner::parse("garbage").pid, 0);
    }

    #[test]
    fn stale_reused_and_foreign_locks() {
        let me = Owner::me();
        // A live process (ourselves) whose recorded start time differs: the id was reused.
        let reused = Owner {
            pid: me.pid,
            host: me.host.clone(),
            start: me.start.map(|s| s + 1),
        };
        if me.start.is_some() {
            assert_eq!(judge(&reused, &me), Verdict::Stale);
        }
        // A process id above Linux's pid_max (2^22) never exists: dead.
        let dead = Owner {
            pid: 4_194_305,
            host: me.host.clone(),
            start: Some(1),
        };
        assert_eq!(judge(&dead, &me), Verdict::Stale);
        let foreign = Owner {
            pid: 1,
            host: Some("elsewhere.example".into()),
            start: Some(1),
        };
        if me.host.is_some() {
            assert_eq!(
                judge(&foreign, &me),
                Verdict::OtherHost("elsewhere.example".into())
            );
        }
        assert_eq!(judge(&me, &me), Verdict::Live);
    }

    #[test]
    fn is_held_tells_a_live_lock_from_a_stale_one() {
        let dir = tempfile::tempdir().unwrap();
        assert!(!is_held(dir.path()), "no lock file");
        let lock = FolderLock::acquire(dir.path(), false).unwrap();
        assert!(is_held(dir.path()), "held by this live process");
        drop(lock);
        // A process id above Linux's pid_max (2^22) never exists: a killed holder.
        let dead = Owner {
            pid: 4_194_305,
            ..Owner::me()
        };
        std::fs::write(dir.path().join(LOCK_FILE), dead.to_text()).unwrap();
        assert!(!is_held(dir.path()));
    }

    #[test]
    fn reused_pid_lock_is_taken_over_even_with_wait() {
        let dir = tempfile::tempdir().unwrap();
        let me = Owner::me();
        let Some(start) = me.start else { return };
        let stale = Owner {
            start: Some(start + 7),
            ..Owner::me()
        };
        std::fs::write(dir.path().join(LOCK_FILE), stale.to_text()).unwrap();
        let lock = FolderLock::acquire(dir.path(), true).unwrap();
        assert_eq!(lock.took_over_from, Some(me.pid));
    }
}
