//! One process at a time per folder: a lock file names the process that works on it. A sweep folder has
//! `DIR/sweep.lock` (two local sweeps on one folder would run the same cases into the same case folders at
//! once, each emptying what the other writes); a run's output folder `OUT` has `.OUT.lock` beside it (see
//! `output_folder.rs`).
//!
//! The lock file is complete before it appears: it is written under a private name and hard-linked into
//! place, which fails atomically when a lock already exists (common practice for lock files, also on NFS).
//! A lock left by a process that died (Ctrl-C, SIGKILL, a crash) on this host is stale: its PID no longer
//! runs, or runs a different process (another start time). It is taken over with a message. A lock held by
//! a live process, or by another host (whose processes cannot be checked from here), is refused.

use std::fs;
use std::io::ErrorKind;
use std::path::{Path, PathBuf};
use std::time::{SystemTime, UNIX_EPOCH};

use serde::{Deserialize, Serialize};

/// The lock's file name in the sweep folder.
pub const LOCK_FILE: &str = "sweep.lock";

/// Who holds a lock (the file's contents).
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct LockHolder {
    pub pid: u32,
    pub host: String,
    /// Start time of the process in clock ticks after boot (`/proc/<pid>/stat`, field 22), to tell a live
    /// holder from a later process that reuses its PID; `None` where unknown.
    pub start_ticks: Option<u64>,
    /// When the lock was taken, seconds since 1970.
    pub since_unix_s: u64,
    /// What the holder is doing, for the message of whoever is refused.
    pub purpose: String,
}

impl LockHolder {
    /// The holder record of process `pid` on this host, now.
    pub fn for_process(pid: u32, purpose: &str) -> LockHolder {
        LockHolder {
            pid,
            host: host_name(),
            start_ticks: process_start_ticks(pid),
            since_unix_s: now_unix_s(),
            purpose: purpose.to_string(),
        }
    }
}

/// Why the lock was not taken.
#[derive(Debug, thiserror::Error)]
pub enum LockError {
    #[error(
        "another {what} is using {dir}: {} by process {} on this host (since {since} s ago); wait for it to end \
         or stop it — if no such {what} runs, remove {lock}",
        holder.purpose,
        holder.pid
    )]
    Held { what: &'static str, dir: String, lock: String, holder: Box<LockHolder>, since: u64 },
    #[error(
        "{dir} is locked by process {} on host {} ({}, since {since} s ago), which cannot be checked from \
         {here}; if no {what} runs there, remove {lock}",
        holder.pid,
        holder.host,
        holder.purpose
    )]
    OtherHost {
        what: &'static str,
        dir: String,
        lock: String,
        holder: Box<LockHolder>,
        here: String,
        since: u64,
    },
    #[error("{lock} exists but is not a {what} lock ({reason}); if no {what} runs on {dir}, remove it")]
    Unreadable { what: &'static str, dir: String, lock: String, reason: String },
    #[error("cannot take the {what} lock {lock}: {source}")]
    Io { what: &'static str, lock: String, source: std::io::Error },
}

/// A held lock; dropping it removes the lock file (if it is still ours).
#[derive(Debug)]
pub struct SweepLock {
    path: PathBuf,
    holder: LockHolder,
}

impl SweepLock {
    /// Take the lock of the sweep folder `dir` (which must exist) for `purpose`. A stale lock is taken
    /// over and `on_takeover` receives a sentence about it.
    pub fn acquire(
        dir: &Path,
        purpose: &str,
        on_takeover: &mut dyn FnMut(String),
    ) -> Result<SweepLock, LockError> {
        Self::acquire_file(&dir.join(LOCK_FILE), dir, "sweep", purpose, on_takeover)
    }

    /// Take the lock file `path` (its folder must exist) that guards `subject` for `purpose`; `what` names
    /// the kind of work in messages ("sweep", "run"). The same rules as [`SweepLock::acquire`].
    pub fn acquire_file(
        path: &Path,
        subject: &Path,
        what: &'static str,
        purpose: &str,
        on_takeover: &mut dyn FnMut(String),
    ) -> Result<SweepLock, LockError> {
        let me = LockHolder::for_process(std::process::id(), purpose);
        let path = path.to_path_buf();
        let dir = path.parent().unwrap_or(Path::new("."));
        let io = |source| LockError::Io { what, lock: path.display().to_string(), source };
        let text = serde_json::to_vec_pretty(&me).map_err(|e| io(std::io::Error::other(e)))?;
        let private = dir.join(format!(".{}.{}.tmp", file_name(&path), me.pid));
        fs::write(&private, &text).map_err(io)?;
        let result = Self::link_or_take_over(what, subject, &path, &private, &me, on_takeover);
        let _ = fs::remove_file(&private);
        result.map(|()| SweepLock { path, holder: me })
    }

    fn link_or_take_over(
        what: &'static str,
        dir: &Path,
        path: &Path,
        private: &Path,
        me: &LockHolder,
        on_takeover: &mut dyn FnMut(String),
    ) -> Result<(), LockError> {
        let shown = || path.display().to_string();
        // Each round either takes the lock, refuses, or removes one stale lock; a few rounds settle races
        // between processes that find the same stale lock.
        for _ in 0..8 {
            match fs::hard_link(private, path) {
                Ok(()) => return Ok(()),
                Err(e) if e.kind() == ErrorKind::AlreadyExists => {}
                Err(source) => return Err(LockError::Io { what, lock: shown(), source }),
            }
            let text = match fs::read(path) {
                Ok(text) => text,
                Err(e) if e.kind() == ErrorKind::NotFound => continue,
                Err(source) => return Err(LockError::Io { what, lock: shown(), source }),
            };
            let holder: LockHolder = serde_json::from_slice(&text).map_err(|e| LockError::Unreadable {
                what,
                dir: dir.display().to_string(),
                lock: shown(),
                reason: e.to_string(),
            })?;
            let since = now_unix_s().saturating_sub(holder.since_unix_s);
            if holder.host != me.host {
                return Err(LockError::OtherHost {
                    what,
                    dir: dir.display().to_string(),
                    lock: shown(),
                    holder: Box::new(holder),
                    here: me.host.clone(),
                    since,
                });
            }
            if is_running(&holder) {
                return Err(LockError::Held {
                    what,
                    dir: dir.display().to_string(),
                    lock: shown(),
                    holder: Box::new(holder),
                    since,
                });
            }
            // Stale. Move it aside (atomic: of several processes only one succeeds) and check that what was
            // moved is the stale lock judged above, not a live one that replaced it meanwhile.
            let aside = path.with_file_name(format!(".{}.stale.{}", file_name(path), me.pid));
            match fs::rename(path, &aside) {
                Ok(()) => {}
                Err(e) if e.kind() == ErrorKind::NotFound => continue,
                Err(source) => return Err(LockError::Io { what, lock: shown(), source }),
            }
            if fs::read(&aside).ok().as_deref() != Some(&text[..]) {
                // Put the newer lock back (unless yet another one appeared) and look again.
                let _ = fs::hard_link(&aside, path);
                let _ = fs::remove_file(&aside);
                continue;
            }
            let _ = fs::remove_file(&aside);
            on_takeover(format!(
                "took over the stale {what} lock {} of process {} ({}, {} s ago), which no longer runs",
                shown(),
                holder.pid,
                holder.purpose,
                since
            ));
        }
        Err(LockError::Io {
            what,
            lock: shown(),
            source: std::io::Error::other("the lock kept changing hands"),
        })
    }

    pub fn holder(&self) -> &LockHolder {
        &self.holder
    }
}

impl Drop for SweepLock {
    fn drop(&mut self) {
        // Remove the lock only if it is still ours (a user may have removed it and another sweep taken it).
        let ours = fs::read(&self.path)
            .ok()
            .and_then(|t| serde_json::from_slice::<LockHolder>(&t).ok())
            .is_some_and(|h| h == self.holder);
        if ours {
            let _ = fs::remove_file(&self.path);
        }
    }
}

/// The last component of `path`, for the names of the private and stale files beside it.
fn file_name(path: &Path) -> String {
    path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default()
}

/// Whether the holder's process still runs on this host: its PID exists and, where known, started at the
/// recorded time. Without `/proc` (not Linux) a process cannot be checked and counts as running.
fn is_running(holder: &LockHolder) -> bool {
    if !Path::new("/proc/self/stat").exists() {
        return true;
    }
    match process_start_ticks(holder.pid) {
        None => false,
        Some(start) => holder.start_ticks.map_or(true, |recorded| recorded == start),
    }
}

/// Field 22 (`starttime`) of `/proc/<pid>/stat`; `None` when the process does not exist.
fn process_start_ticks(pid: u32) -> Option<u64> {
    let stat = fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
    // The command name (field 2) is in parentheses and may hold blanks: count fields after the last ')'.
    let after = &stat[stat.rfind(')')? + 1..];
    after.split_whitespace().nth(19)?.parse().ok()
}

/// This machine's name (Linux: the kernel's; else `$HOSTNAME`), `unknown` when neither is known.
fn host_name() -> String {
    fs::read_to_string("/proc/sys/kernel/hostname")
        .ok()
        .or_else(|| std::env::var("HOSTNAME").ok())
        .map(|h| h.trim().to_string())
        .filter(|h| !h.is_empty())
        .unwrap_or_else(|| "unknown".into())
}

fn now_unix_s() -> u64 {
    SystemTime::now().duration_since(UNIX_EPOCH).map(|d| d.as_secs()).unwrap_or(0)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::atomic::entries;

    fn take(dir: &Path) -> (Result<SweepLock, LockError>, Vec<String>) {
        let mut messages = Vec::new();
        let lock = SweepLock::acquire(dir, "test", &mut |m| messages.push(m));
        (lock, messages)
    }

    fn plant(dir: &Path, holder: &LockHolder) {
        fs::write(dir.join(LOCK_FILE), serde_json::to_vec(holder).unwrap()).unwrap();
    }

    #[test]
    fn a_second_lock_is_refused_until_the_first_is_dropped() {
        let dir = tempfile::tempdir().unwrap();
        let (first, messages) = take(dir.path());
        let first = first.unwrap();
        assert!(messages.is_empty());
        assert_eq!(entries(dir.path()), [LOCK_FILE]);
        let holder: LockHolder =
            serde_json::from_slice(&fs::read(dir.path().join(LOCK_FILE)).unwrap()).unwrap();
        assert_eq!(holder.pid, std::process::id());
        // This process is alive: a second taker (a thread here, a process in tests/sweep_lock.rs) is refused.
        let error = take(dir.path()).0.unwrap_err();
        assert!(
            matches!(&error, LockError::Held { holder, .. } if holder.pid == std::process::id()),
            "{error}"
        );
        assert!(error.to_string().contains("another sweep is using"), "{error}");
        drop(first);
        assert!(entries(dir.path()).is_empty());
        assert!(take(dir.path()).0.is_ok());
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn a_dead_or_reused_pid_is_taken_over_with_a_message() {
        let dir = tempfile::tempdir().unwrap();
        // A process that has exited: its PID no longer runs (or, if already reused, started at another time).
        let mut child = std::process::Command::new("true").spawn().unwrap();
        let dead = child.id();
        child.wait().unwrap();
        let stale = LockHolder {
            pid: dead,
            host: host_name(),
            start_ticks: Some(1),
            since_unix_s: now_unix_s() - 60,
            purpose: "local sweep".into(),
        };
        plant(dir.path(), &stale);
        let (lock, messages) = take(dir.path());
        let lock = lock.unwrap();
        assert_eq!(messages.len(), 1, "{messages:?}");
        assert!(messages[0].contains(&format!("process {dead}")) && messages[0].contains("no longer runs"));
        assert_eq!(lock.holder().pid, std::process::id());
        drop(lock);
        // Our own PID with a wrong start time: a reused PID, also stale.
        let reused = LockHolder { pid: std::process::id(), ..stale };
        plant(dir.path(), &reused);
        let (lock, messages) = take(dir.path());
        assert!(lock.is_ok() && messages.len() == 1, "{messages:?}");
    }

    #[test]
    fn other_hosts_and_garbage_are_refused_and_left_alone() {
        let dir = tempfile::tempdir().unwrap();
        let remote = LockHolder {
            pid: 1,
            host: format!("{}-elsewhere", host_name()),
            start_ticks: None,
            since_unix_s: now_unix_s(),
            purpose: "local sweep".into(),
        };
        plant(dir.path(), &remote);
        let error = take(dir.path()).0.unwrap_err();
        assert!(matches!(error, LockError::OtherHost { .. }), "{error}");
        assert!(error.to_string().contains("-elsewhere"), "{error}");
        fs::write(dir.path().join(LOCK_FILE), "not json").unwrap();
        assert!(matches!(take(dir.path()).0.unwrap_err(), LockError::Unreadable { .. }));
        assert_eq!(entries(dir.path()), [LOCK_FILE], "the refused takers leave no files behind");
    }

    #[test]
    fn dropping_a_lock_that_was_replaced_leaves_the_new_one() {
        let dir = tempfile::tempdir().unwrap();
        let lock = take(dir.path()).0.unwrap();
        let other = LockHolder { pid: 1, ..lock.holder().clone() };
        plant(dir.path(), &other);
        drop(lock);
        assert_eq!(entries(dir.path()), [LOCK_FILE]);
    }
}
