//! A run's output folder holds one whole run or the previous run untouched.
//!
//! The run writes into a staging folder beside the destination (`.<name>.partial`, same file system) and the
//! finished folder takes the destination's place in one step: Linux `renameat2(RENAME_EXCHANGE)` swaps the
//! two folders atomically, then the old one is removed. A kill before the swap leaves the previous run
//! as it was; after it, the new run is complete. The marker [`MARKER`], written last into the staging folder,
//! lists the files of the run; whatever an earlier run listed and this one does not write disappears with the
//! old folder. Files the tool did not write (no marker lists them) are carried over by hard link before the
//! swap, so a user's own files survive at every moment; stale temporary files of the atomic writer are not.
//!
//! Before solving, [`OutputFolder::prepare`] takes a lock beside the destination (`.<name>.lock`, the sweeps'
//! lock file), refuses a destination that is not a folder or that holds one of the case's inputs, and makes
//! the staging folder — which proves the place writable. A transient run's checkpoint lives in the staging
//! folder, which `--resume` keeps.

use std::collections::BTreeSet;
use std::fs;
use std::io::ErrorKind;
use std::path::{Path, PathBuf};

use super::folder_lock::{LockError, SweepLock};

/// The completeness marker of a run folder.
pub const MARKER: &str = "run.json";

/// The file whose presence keeps a staging folder after a failed run (a transient run's restart point).
const CHECKPOINT: &str = "checkpoint.bin";

/// Why the output folder cannot be used.
#[derive(Debug, thiserror::Error)]
pub enum OutputFolderError {
    /// The user's choice cannot work (a file, a folder holding the inputs, not writable, in use): exit code 2.
    #[error("{0}")]
    Refused(String),
    /// Writing or moving the outputs failed (a full disk, a lost mount): exit code 1.
    #[error("cannot {what}: {source}")]
    Io { what: String, source: std::io::Error },
}

fn io(what: impl Into<String>) -> impl FnOnce(std::io::Error) -> OutputFolderError {
    let what = what.into();
    move |source| OutputFolderError::Io { what, source }
}

/// A destination being written: the lock is held until the value is dropped.
#[derive(Debug)]
pub struct OutputFolder {
    destination: PathBuf,
    staging: PathBuf,
    _lock: SweepLock,
}

/// `.<name><suffix>` beside `destination`.
fn sibling(destination: &Path, suffix: &str) -> PathBuf {
    let name = destination.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
    destination.with_file_name(format!(".{name}{suffix}"))
}

/// What [`OutputFolder::prepare`] does with a staging folder that a killed run left.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LeftStaging {
    /// Start afresh.
    Remove,
    /// Keep it: it holds the checkpoint of a transient run to resume.
    Keep,
}

impl OutputFolder {
    /// Checks and locks `destination` before any solve. `inputs` are the files the case reads (case file,
    /// layout file, initial field).
    pub fn prepare(
        destination: &Path,
        inputs: &[PathBuf],
        left_staging: LeftStaging,
    ) -> Result<Self, OutputFolderError> {
        let refused = |m: String| OutputFolderError::Refused(m);
        let shown = destination.display().to_string();
        // `out/.` or `..` has no name to stage beside: resolve it first.
        let destination = if destination.file_name().is_none() {
            fs::canonicalize(destination)
                .map_err(|e| refused(format!("cannot use {shown} as the output folder: {e}")))?
        } else {
            destination.to_path_buf()
        };
        match fs::metadata(&destination) {
            Ok(m) if !m.is_dir() => {
                return Err(refused(format!(
                    "the output folder {shown} exists and is not a folder; choose another -o"
                )))
            }
            Ok(_) => {
                let inside = fs::canonicalize(&destination).map_err(io(format!("resolve {shown}")))?;
                for input in inputs {
                    if fs::canonicalize(input).is_ok_and(|i| i.starts_with(&inside)) {
                        return Err(refused(format!(
                            "the output folder {shown} holds {}, which this case reads; choose another -o",
                            input.display()
                        )));
                    }
                }
            }
            Err(e) if e.kind() == ErrorKind::NotFound => {}
            Err(e) => return Err(refused(format!("cannot use {shown} as the output folder: {e}"))),
        }
        let parent = match destination.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        fs::create_dir_all(&parent).map_err(|e| {
            refused(format!("cannot create the folder {} for {shown}: {e}", parent.display()))
        })?;
        let lock = SweepLock::acquire_file(
            &sibling(&destination, ".lock"),
            &destination,
            "run",
            "a run",
            &mut |m| eprintln!("run: {m}"),
        )
        .map_err(|e| match e {
            LockError::Io { ref source, .. } if source.kind() != ErrorKind::PermissionDenied => {
                OutputFolderError::Io {
                    what: format!("lock {shown}"),
                    source: std::io::Error::other(e.to_string()),
                }
            }
            other => refused(format!("{other}; the output folder {shown} is not writable or is in use")),
        })?;
        restore_interrupted_swap(&destination)?;
        let staging = sibling(&destination, ".partial");
        if !(left_staging == LeftStaging::Keep && staging.is_dir()) {
            remove_if_present(&staging)?;
            fs::create_dir(&staging).map_err(|e| {
                refused(format!("the output folder {shown} is not writable ({}: {e})", staging.display()))
            })?;
        }
        if destination.is_dir() && !writable(&destination) {
            return Err(refused(format!("the output folder {shown} is not writable")));
        }
        Ok(OutputFolder { destination, staging, _lock: lock })
    }

    /// Where the run writes its files.
    pub fn staging(&self) -> &Path {
        &self.staging
    }

    /// Where the files end up.
    pub fn destination(&self) -> &Path {
        &self.destination
    }

    /// Writes the marker and puts the staging folder in the destination's place (see the module doc).
    pub fn commit(self) -> Result<(), OutputFolderError> {
        let mut files = BTreeSet::new();
        list_files(&self.staging, Path::new(""), &mut files).map_err(io("list the outputs"))?;
        files.remove(Path::new(MARKER));
        let marker = serde_json::json!({
            "written_by": "plumefield run",
            "version": env!("CARGO_PKG_VERSION"),
            "files": files.iter().map(|f| f.to_string_lossy()).collect::<Vec<_>>(),
        });
        let text = serde_json::to_vec_pretty(&marker).map_err(|e| io("write the run marker")(e.into()))?;
        super::atomic::write_atomic(&self.staging.join(MARKER), &text).map_err(io("write the run marker"))?;

        let shown = self.destination.display().to_string();
        if !self.destination.exists() {
            fs::rename(&self.staging, &self.destination)
                .map_err(io(format!("move the outputs into {shown}")))?;
            return super::atomic::sync_parent_directory(&self.destination)
                .map_err(io(format!("sync {shown}")));
        }
        let earlier = listed_files(&self.destination);
        carry_over(&self.destination, &self.staging, Path::new(""), &earlier, &files, Carry::Link)
            .map_err(io(format!("keep the other files of {shown}")))?;
        exchange(&self.staging, &self.destination).map_err(io(format!("move the outputs into {shown}")))?;
        super::atomic::sync_parent_directory(&self.destination).map_err(io(format!("sync {shown}")))?;
        // The old folder is now at the staging path. Anything created in it since the links were made moves
        // over; the rest goes.
        let mut now_written = files;
        now_written.insert(PathBuf::from(MARKER));
        carry_over(&self.staging, &self.destination, Path::new(""), &earlier, &now_written, Carry::Move)
            .map_err(io(format!("keep the other files of {shown}")))?;
        fs::remove_dir_all(&self.staging).map_err(io(format!("remove the previous run's files of {shown}")))
    }
}

impl Drop for OutputFolder {
    /// A run that stops before [`OutputFolder::commit`] leaves the destination as it was; its staging folder
    /// goes too, unless it holds a transient run's checkpoint for `--resume`.
    fn drop(&mut self) {
        if self.staging.is_dir() && !self.staging.join(CHECKPOINT).exists() {
            let _ = fs::remove_dir_all(&self.staging);
        }
    }
}

/// Whether the folder accepts new entries (`access(2)`; root passes).
fn writable(dir: &Path) -> bool {
    use std::os::unix::ffi::OsStrExt;
    let Ok(c) = std::ffi::CString::new(dir.as_os_str().as_bytes()) else { return false };
    // SAFETY: a valid NUL-terminated path.
    unsafe { libc::access(c.as_ptr(), libc::W_OK | libc::X_OK) == 0 }
}

fn remove_if_present(path: &Path) -> Result<(), OutputFolderError> {
    match fs::remove_dir_all(path) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == ErrorKind::NotFound => Ok(()),
        Err(e) => Err(io(format!("remove the leftover {}", path.display()))(e)),
    }
}

/// The fallback of [`exchange`] renames the destination to `.<name>.previous` first; a kill between its two
/// renames leaves that name alone. Put it back (or drop it when the new run arrived).
fn restore_interrupted_swap(destination: &Path) -> Result<(), OutputFolderError> {
    let previous = sibling(destination, ".previous");
    if !previous.exists() {
        return Ok(());
    }
    if destination.exists() {
        remove_if_present(&previous)
    } else {
        fs::rename(&previous, destination).map_err(io(format!("restore {}", destination.display())))
    }
}

/// Swaps the folders `a` and `b` (both exist) atomically; where the file system cannot, renames `b` aside
/// and `a` into its place, which [`restore_interrupted_swap`] repairs after a kill in between.
fn exchange(a: &Path, b: &Path) -> std::io::Result<()> {
    use std::os::unix::ffi::OsStrExt;
    let c = |p: &Path| std::ffi::CString::new(p.as_os_str().as_bytes()).map_err(std::io::Error::other);
    let (ca, cb) = (c(a)?, c(b)?);
    // SAFETY: valid NUL-terminated paths relative to the working directory.
    let result = unsafe {
        libc::renameat2(libc::AT_FDCWD, ca.as_ptr(), libc::AT_FDCWD, cb.as_ptr(), libc::RENAME_EXCHANGE)
    };
    if result == 0 {
        return Ok(());
    }
    let error = std::io::Error::last_os_error();
    if !matches!(error.raw_os_error(), Some(libc::EINVAL) | Some(libc::ENOSYS) | Some(libc::EOPNOTSUPP)) {
        return Err(error);
    }
    let previous = sibling(b, ".previous");
    fs::rename(b, &previous)?;
    fs::rename(a, b)?;
    fs::rename(&previous, a)
}

/// The files the marker of run folder `dir` lists (empty without a readable marker).
fn listed_files(dir: &Path) -> BTreeSet<PathBuf> {
    let Ok(text) = fs::read(dir.join(MARKER)) else { return BTreeSet::new() };
    let Ok(value) = serde_json::from_slice::<serde_json::Value>(&text) else { return BTreeSet::new() };
    let mut files: BTreeSet<PathBuf> = value["files"]
        .as_array()
        .map(|a| a.iter().filter_map(|f| f.as_str()).map(PathBuf::from).collect())
        .unwrap_or_default();
    files.insert(PathBuf::from(MARKER));
    files
}

/// Every regular file and symbolic link under `root/relative`, as paths relative to `root`.
fn list_files(root: &Path, relative: &Path, out: &mut BTreeSet<PathBuf>) -> std::io::Result<()> {
    for entry in fs::read_dir(root.join(relative))? {
        let entry = entry?;
        let path = relative.join(entry.file_name());
        if entry.file_type()?.is_dir() {
            list_files(root, &path, out)?;
        } else {
            out.insert(path);
        }
    }
    Ok(())
}

/// A temporary file of the atomic writer (`.<name>.<pid>.<n>.tmp`): never carried over.
fn is_stale_temporary(name: &str) -> bool {
    let Some(stem) = name.strip_prefix('.').and_then(|n| n.strip_suffix(".tmp")) else { return false };
    let mut parts = stem.rsplitn(3, '.');
    let (n, pid) = (parts.next(), parts.next());
    [n, pid].iter().all(|p| p.is_some_and(|p| !p.is_empty() && p.bytes().all(|b| b.is_ascii_digit())))
}

#[derive(Clone, Copy, PartialEq)]
enum Carry {
    /// Hard-link (copy where links fail): the original stays until its folder is swapped away.
    Link,
    /// Rename: the original's folder is about to be removed.
    Move,
}

/// Puts into `to` every entry under `from/relative` that no run wrote (not in `listed`, the earlier marker's
/// files) and that `to` does not already have from this run (`written`).
fn carry_over(
    from: &Path,
    to: &Path,
    relative: &Path,
    listed: &BTreeSet<PathBuf>,
    written: &BTreeSet<PathBuf>,
    how: Carry,
) -> std::io::Result<()> {
    let entries = match fs::read_dir(from.join(relative)) {
        Ok(entries) => entries,
        Err(e) if e.kind() == ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(e),
    };
    for entry in entries {
        let entry = entry?;
        let name = entry.file_name();
        let path = relative.join(&name);
        let kind = entry.file_type()?;
        if kind.is_dir() {
            carry_over(from, to, &path, listed, written, how)?;
            continue;
        }
        if listed.contains(&path) || written.contains(&path) || is_stale_temporary(&name.to_string_lossy()) {
            continue;
        }
        let (source, target) = (from.join(&path), to.join(&path));
        if fs::symlink_metadata(&target).is_ok() {
            continue;
        }
        if let Some(parent) = target.parent() {
            fs::create_dir_all(parent)?;
        }
        match how {
            Carry::Move => fs::rename(&source, &target)?,
            Carry::Link if kind.is_symlink() => std::os::unix::fs::symlink(fs::read_link(&source)?, &target)?,
            Carry::Link => {
                if fs::hard_link(&source, &target).is_err() {
                    fs::copy(&source, &target)?;
                }
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run(destination: &Path, files: &[(&str, &str)]) {
        let folder = OutputFolder::prepare(destination, &[], LeftStaging::Remove).expect("prepare");
        for (name, text) in files {
            let path = folder.staging().join(name);
            fs::create_dir_all(path.parent().unwrap()).unwrap();
            fs::write(path, text).unwrap();
        }
        folder.commit().expect("commit");
    }

    #[test]
    fn a_run_replaces_the_earlier_runs_files_and_keeps_the_users() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        run(&out, &[("a.csv", "1"), ("figures/f.png", "png"), ("old_only.csv", "x")]);
        fs::write(out.join("notes.txt"), "mine").unwrap();
        fs::write(out.join(".a.csv.123.4.tmp"), "stale").unwrap();
        run(&out, &[("a.csv", "2")]);
        assert_eq!(fs::read_to_string(out.join("a.csv")).unwrap(), "2");
        assert_eq!(fs::read_to_string(out.join("notes.txt")).unwrap(), "mine");
        assert!(!out.join("old_only.csv").exists() && !out.join("figures/f.png").exists());
        assert!(!out.join(".a.csv.123.4.tmp").exists());
        let listed = listed_files(&out);
        assert!(listed.contains(Path::new("a.csv")) && !listed.contains(Path::new("notes.txt")));
        let names: Vec<_> = fs::read_dir(dir.path()).unwrap().map(|e| e.unwrap().file_name()).collect();
        assert_eq!(names, vec![std::ffi::OsString::from("out")], "nothing is left beside the folder");
    }

    #[test]
    fn inputs_inside_the_folder_and_files_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let case = dir.path().join("case.toml");
        fs::write(&case, "").unwrap();
        let refused = OutputFolder::prepare(dir.path(), std::slice::from_ref(&case), LeftStaging::Remove);
        assert!(
            matches!(refused, Err(OutputFolderError::Refused(ref m)) if m.contains("case.toml")),
            "{refused:?}"
        );
        let file = OutputFolder::prepare(&case, &[], LeftStaging::Remove);
        assert!(matches!(file, Err(OutputFolderError::Refused(_))), "{file:?}");
        assert!(matches!(
            OutputFolder::prepare(Path::new("/dev/null"), &[], LeftStaging::Remove),
            Err(OutputFolderError::Refused(_))
        ));
    }

    #[test]
    fn a_second_run_on_a_locked_folder_is_refused() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        let first = OutputFolder::prepare(&out, &[], LeftStaging::Remove).expect("first");
        let second = OutputFolder::prepare(&out, &[], LeftStaging::Remove);
        assert!(
            matches!(second, Err(OutputFolderError::Refused(ref m)) if m.contains("another run")),
            "{second:?}"
        );
        drop(first);
        OutputFolder::prepare(&out, &[], LeftStaging::Remove).expect("free again");
    }

    #[test]
    fn temporaries_are_recognised() {
        assert!(is_stale_temporary(".fields.h5.1234.7.tmp"));
        assert!(!is_stale_temporary(".fields.h5.tmp"));
        assert!(!is_stale_temporary("notes.1.2.tmp"));
    }
}
