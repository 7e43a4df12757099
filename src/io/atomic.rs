//! Atomic file replacement: every output is written to a temporary file in the destination's own directory,
//! flushed to disk, then renamed over the destination. A run that is killed part-way therefore leaves either
//! the previous file or none, never a half-written one that looks complete (DESIGN.md §6).
//!
//! The temporary file lives in the same directory because `rename` is only atomic within one file system
//! (POSIX `rename(2)`, common practice). Its name starts with a dot and ends in `.tmp` so that a leftover from
//! a power cut is recognisably not an output.
//!
//! The `fsync`s make each file durable on its own. A caller that has another proof of completeness may skip
//! them for a stretch of writes ([`without_fsync`]): the cases of a local sweep do, because a case counts as
//! done only through its done marker (written after the outputs, holding their SHA-256s and the boot id, so
//! that a crash is caught on the next boot; see `sweep::done_marker`). The rename stays, so a killed process
//! still never leaves a half-written file in place.

use std::cell::Cell;
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

thread_local! {
    /// Set while this thread runs inside [`without_fsync`].
    static SKIP_FSYNC: Cell<bool> = const { Cell::new(false) };
}

/// Runs `f` with the atomic writes made on this thread renamed into place without their `fsync`s (of the file
/// and of its directory). Only for outputs whose completeness something checked after a crash vouches for (a
/// sweep's done marker and its boot id), or that are drawn again anyway (figures): a process killed part-way
/// leaves them exactly as a synced write would (the page cache outlives the process), but a power cut or
/// kernel crash may lose them even after the rename. Writes on other threads (e.g. rayon workers
/// that `f` starts) still sync, which is merely slower.
pub fn without_fsync<T>(f: impl FnOnce() -> T) -> T {
    /// Restores the previous setting also when `f` panics.
    struct Restore(bool);
    impl Drop for Restore {
        fn drop(&mut self) {
            SKIP_FSYNC.with(|skip| skip.set(self.0));
        }
    }
    let _restore = Restore(SKIP_FSYNC.with(|skip| skip.replace(true)));
    f()
}

fn fsync_wanted() -> bool {
    !SKIP_FSYNC.with(Cell::get)
}

/// Writes `bytes` to `path` atomically: temporary file, `fsync`, rename, `fsync` of the directory (both
/// `fsync`s skipped inside [`without_fsync`]).
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let guard = TempGuard::new(path)?;
    {
        let mut file = fs::OpenOptions::new().write(true).create_new(true).open(guard.path())?;
        file.write_all(bytes)?;
        if fsync_wanted() {
            file.sync_all()?;
        }
    }
    guard.commit(path)
}

/// Lets `f` write a file at a temporary path of its choosing (for libraries such as HDF5 that open files
/// themselves), then renames it into `path` only if `f` succeeds. On an error, or a panic inside `f`, the
/// temporary file is removed and `path` is left untouched.
pub fn with_atomic_file<T>(path: &Path, f: impl FnOnce(&Path) -> anyhow::Result<T>) -> anyhow::Result<T> {
    let guard = TempGuard::new(path)?;
    let value = f(guard.path())?;
    // The writer has closed the file; flush its contents to disk before the rename makes it visible.
    if fsync_wanted() {
        fs::File::open(guard.path())?.sync_all()?;
    }
    guard.commit(path)?;
    Ok(value)
}

/// A temporary path beside the destination that is deleted when dropped unless committed.
struct TempGuard {
    temp: PathBuf,
    armed: bool,
}

impl TempGuard {
    fn new(destination: &Path) -> std::io::Result<Self> {
        let file_name = destination.file_name().ok_or_else(|| {
            std::io::Error::new(
                std::io::ErrorKind::InvalidInput,
                format!("output path {} does not name a file", destination.display()),
            )
        })?;
        // Unique within the process (counter) and across processes (pid) writing to the same directory.
        static COUNTER: AtomicU64 = AtomicU64::new(0);
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let mut name = std::ffi::OsString::from(".");
        name.push(file_name);
        name.push(format!(".{}.{}.tmp", std::process::id(), n));
        let temp = destination.with_file_name(name);
        // A stale temporary with this exact name can only come from an earlier process with a recycled pid.
        match fs::remove_file(&temp) {
            Ok(()) => {}
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(e) => return Err(e),
        }
        Ok(TempGuard { temp, armed: true })
    }

    fn path(&self) -> &Path {
        &self.temp
    }

    /// Renames the temporary file onto `destination` and makes the rename durable (not in [`without_fsync`]).
    fn commit(mut self, destination: &Path) -> std::io::Result<()> {
        fs::rename(&self.temp, destination)?;
        self.armed = false;
        if fsync_wanted() {
            sync_parent_directory(destination)
        } else {
            Ok(())
        }
    }
}

impl Drop for TempGuard {
    fn drop(&mut self) {
        if self.armed {
            // Nothing useful can be done if removal fails while already unwinding from another error.
            let _ = fs::remove_file(&self.temp);
        }
    }
}

/// `fsync` of the directory entry, so the rename itself survives a crash (POSIX; common practice).
#[cfg(unix)]
pub fn sync_parent_directory(path: &Path) -> std::io::Result<()> {
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    fs::File::open(parent)?.sync_all()
}

#[cfg(not(unix))]
pub fn sync_parent_directory(_path: &Path) -> std::io::Result<()> {
    Ok(())
}

/// The names in `dir`, sorted: what a write left behind, for the tests of the writers.
#[cfg(test)]
pub(crate) fn entries(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> =
        fs::read_dir(dir).unwrap().map(|e| e.unwrap().file_name().to_string_lossy().into_owned()).collect();
    names.sort();
    names
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn write_atomic_creates_and_replaces_without_leftovers() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("out.txt");
        write_atomic(&path, b"first").unwrap();
        assert_eq!(fs::read(&path).unwrap(), b"first");
        write_atomic(&path, b"second, longer").unwrap();
        assert_eq!(fs::read(&path).unwrap(), b"second, longer");
        assert_eq!(entries(dir.path()), vec!["out.txt".to_string()]);
    }

    #[test]
    fn write_atomic_into_missing_directory_fails_cleanly() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("missing").join("out.txt");
        assert!(write_atomic(&path, b"x").is_err());
        assert!(entries(dir.path()).is_empty());
    }

    #[test]
    fn failed_closure_leaves_no_file_and_no_temporary() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("fields.h5");
        let result: anyhow::Result<()> = with_atomic_file(&path, |temp| {
            fs::write(temp, b"half written")?;
            anyhow::bail!("solver diverged while writing")
        });
        let err = result.unwrap_err();
        assert!(err.to_string().contains("diverged"), "{err}");
        assert!(entries(dir.path()).is_empty(), "left behind: {:?}", entries(dir.path()));
    }

    #[test]
    fn failed_closure_keeps_previous_complete_file() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("summary.json");
        write_atomic(&path, b"{\"complete\": true}").unwrap();
        let result: anyhow::Result<()> = with_atomic_file(&path, |temp| {
            fs::write(temp, b"{\"compl")?;
            anyhow::bail!("interrupted")
        });
        assert!(result.is_err());
        assert_eq!(fs::read(&path).unwrap(), b"{\"complete\": true}");
        assert_eq!(entries(dir.path()), vec!["summary.json".to_string()]);
    }

    #[test]
    fn panicking_closure_leaves_no_temporary() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("cells.csv");
        let outcome = std::panic::catch_unwind(|| {
            let _ = with_atomic_file(&path, |temp| -> anyhow::Result<()> {
                fs::write(temp, b"id,x\n1,")?;
                panic!("writer bug");
            });
        });
        assert!(outcome.is_err());
        assert!(entries(dir.path()).is_empty(), "left behind: {:?}", entries(dir.path()));
    }

    #[test]
    fn successful_closure_renames_and_returns_value() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("fields.xmf");
        let seen_temp = with_atomic_file(&path, |temp| {
            assert_ne!(temp, path.as_path());
            assert_eq!(temp.parent(), path.parent());
            fs::write(temp, b"<Xdmf/>")?;
            Ok(temp.to_path_buf())
        })
        .unwrap();
        assert!(!seen_temp.exists());
        assert_eq!(fs::read(&path).unwrap(), b"<Xdmf/>");
        assert_eq!(entries(dir.path()), vec!["fields.xmf".to_string()]);
    }

    #[test]
    fn closure_that_writes_nothing_is_an_error() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("nothing.h5");
        let result = with_atomic_file(&path, |_temp| Ok(()));
        assert!(result.is_err());
        let result = without_fsync(|| with_atomic_file(&path, |_temp| Ok(())));
        assert!(result.is_err());
        assert!(entries(dir.path()).is_empty());
    }

    #[test]
    fn without_fsync_still_writes_atomically_and_is_scoped() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("cells.csv");
        without_fsync(|| {
            assert!(!fsync_wanted());
            write_atomic(&path, b"id\n1\n").unwrap();
            with_atomic_file(&dir.path().join("fields.h5"), |temp| Ok(fs::write(temp, b"h5")?)).unwrap();
            // Another thread keeps syncing.
            std::thread::scope(|s| s.spawn(|| assert!(fsync_wanted())).join().unwrap());
        });
        assert!(fsync_wanted());
        assert_eq!(fs::read(&path).unwrap(), b"id\n1\n");
        assert_eq!(entries(dir.path()), vec!["cells.csv".to_string(), "fields.h5".to_string()]);
        // A panic inside the scope does not leave the thread skipping syncs.
        let _ = std::panic::catch_unwind(|| without_fsync(|| panic!("writer bug")));
        assert!(fsync_wanted());
    }
}
