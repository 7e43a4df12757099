//! When is a case of a sweep done? When its folder holds `done.json` — written atomically, last, after every
//! output — whose case hash is the hash of the case as the sweep now expands it, and every output it lists is
//! present with its recorded size. A run killed at any moment therefore leaves a case either done (complete
//! outputs) or not done (run again from scratch); a changed sweep file changes the hash and re-runs the case.
//!
//! A case that fails gets `failed.json` (the error sentence) instead; it is retried on the next run.
//!
//! The outputs of a local sweep's case, and its `done.json`, are written without `fsync`
//! (`io::atomic::without_fsync`). That is safe because of what the marker records: the SHA-256 of every
//! output and the boot id of the machine that wrote them (`unsynced_boot_id`). A killed process cannot lose
//! written data (it stays in the kernel's page cache), so within the same boot the size check above still
//! decides. Only a kernel crash or power cut can lose or zero-fill unsynced files, and both change the boot
//! id. What such a crash can leave is then one of: no marker, or an unreadable one (the case runs again), or
//! a marker from another boot, which is checked against the outputs' SHA-256s (a mismatch makes the case run
//! again). The marker itself therefore needs no sync either. A marker without the field (outputs and marker
//! synced one by one, e.g. by a Slurm task) needs only the size check.

use std::fs;
use std::io::Read;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::io::write_atomic;

/// The marker of a finished case.
pub const DONE_FILE: &str = "done.json";
/// The record of a failed case.
pub const FAILED_FILE: &str = "failed.json";
/// The case text as run.
pub const CASE_FILE: &str = "case.toml";

/// One output file of a finished case.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct OutputRecord {
    /// Path relative to the case folder, `/`-separated.
    pub file: String,
    pub bytes: u64,
    pub sha256: String,
}

/// Contents of `done.json`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct DoneMarker {
    pub case_id: String,
    pub case_sha256: String,
    /// Wall time of the case (parse, solve, write), seconds.
    pub elapsed_s: f64,
    /// Worker threads the case ran on.
    pub threads: usize,
    /// CPU time of those threads, seconds (Linux; absent elsewhere and in markers of older versions).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cpu_s: Option<f64>,
    /// Time those threads waited for a CPU (other programs' load), seconds; what is left of `elapsed_s`
    /// after both is time asleep (file syncs, locks). See `numkit::meter`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub runqueue_s: Option<f64>,
    /// Boot id of the machine that wrote the outputs without syncing them; absent when they were synced.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unsynced_boot_id: Option<String>,
    pub outputs: Vec<OutputRecord>,
}

/// Contents of `failed.json`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FailureRecord {
    pub case_id: String,
    pub case_sha256: String,
    /// "input" (the case is invalid), "solver" (no convergence, non-finite values), "io", or "panic".
    pub kind: String,
    pub error: String,
}

/// Where a case stands.
#[derive(Clone, Debug, PartialEq)]
pub enum CaseState {
    /// Finished with complete outputs for the current case text.
    Done(DoneMarker),
    /// The last attempt failed with this record (for the current case text).
    Failed(FailureRecord),
    /// Never run, interrupted, or run for a different case text; `reason` says which.
    NotDone { reason: String },
}

/// The state of the case in `case_dir`, expected to have the hash `case_sha256`.
pub fn case_state(case_dir: &Path, case_sha256: &str) -> CaseState {
    let done_path = case_dir.join(DONE_FILE);
    match fs::read(&done_path) {
        Ok(bytes) => match serde_json::from_slice::<DoneMarker>(&bytes) {
            Ok(marker) if marker.case_sha256 != case_sha256 => {
                return CaseState::NotDone { reason: "the case changed since it ran".into() }
            }
            Ok(marker) => {
                let check =
                    if from_another_boot(&marker) { OutputCheck::SizeAndChecksum } else { OutputCheck::Size };
                return match check_outputs(case_dir, &marker, check) {
                    Ok(()) => CaseState::Done(marker),
                    Err(reason) => CaseState::NotDone { reason },
                };
            }
            Err(e) => return CaseState::NotDone { reason: format!("{} is unreadable: {e}", DONE_FILE) },
        },
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
        Err(e) => return CaseState::NotDone { reason: format!("cannot read {}: {e}", done_path.display()) },
    }
    match fs::read(case_dir.join(FAILED_FILE))
        .ok()
        .and_then(|b| serde_json::from_slice::<FailureRecord>(&b).ok())
    {
        Some(record) if record.case_sha256 == case_sha256 => CaseState::Failed(record),
        _ => CaseState::NotDone { reason: "not run yet".into() },
    }
}

/// This boot of this machine (Linux's random boot id, new at every boot); `None` where there is none.
pub fn boot_id() -> Option<String> {
    static BOOT_ID: std::sync::OnceLock<Option<String>> = std::sync::OnceLock::new();
    BOOT_ID
        .get_or_init(|| {
            let text = fs::read_to_string("/proc/sys/kernel/random/boot_id").ok()?;
            let id = text.trim();
            (!id.is_empty()).then(|| id.to_string())
        })
        .clone()
}

/// How closely [`check_outputs`] looks at each output of a done marker.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OutputCheck {
    /// Present with the recorded size.
    Size,
    /// Present with the recorded size and SHA-256 (outputs that may not have reached the disk).
    SizeAndChecksum,
}

/// Check every output listed in `marker` as `check` says.
pub fn check_outputs(case_dir: &Path, marker: &DoneMarker, check: OutputCheck) -> Result<(), String> {
    if marker.outputs.is_empty() {
        return Err("the done marker lists no outputs".into());
    }
    for output in &marker.outputs {
        let path = case_dir.join(&output.file);
        let meta = fs::metadata(&path).map_err(|e| format!("output {} is missing: {e}", output.file))?;
        if meta.len() != output.bytes {
            return Err(format!(
                "output {} has {} bytes, {} were written",
                output.file,
                meta.len(),
                output.bytes
            ));
        }
        if check == OutputCheck::SizeAndChecksum {
            let sha = file_sha256(&path).map_err(|e| format!("cannot read output {}: {e}", output.file))?;
            if sha != output.sha256 {
                return Err(format!(
                    "output {} is not the file that was written (SHA-256 differs)",
                    output.file
                ));
            }
        }
    }
    Ok(())
}

/// Every regular file under `case_dir` except the markers and hidden (temporary) files, sorted.
pub fn record_outputs(case_dir: &Path) -> std::io::Result<Vec<OutputRecord>> {
    let mut files = Vec::new();
    collect_files(case_dir, case_dir, &mut files)?;
    files.sort();
    files
        .into_iter()
        .map(|(relative, path)| {
            Ok(OutputRecord {
                bytes: fs::metadata(&path)?.len(),
                sha256: file_sha256(&path)?,
                file: relative,
            })
        })
        .collect()
}

fn collect_files(root: &Path, dir: &Path, out: &mut Vec<(String, PathBuf)>) -> std::io::Result<()> {
    for entry in fs::read_dir(dir)? {
        let entry = entry?;
        let name = entry.file_name().to_string_lossy().into_owned();
        if name.starts_with('.') || (dir == root && (name == DONE_FILE || name == FAILED_FILE)) {
            continue;
        }
        let path = entry.path();
        if entry.file_type()?.is_dir() {
            collect_files(root, &path, out)?;
        } else {
            let relative = path.strip_prefix(root).unwrap_or(&path);
            let relative =
                relative.components().map(|c| c.as_os_str().to_string_lossy()).collect::<Vec<_>>().join("/");
            out.push((relative, path));
        }
    }
    Ok(())
}

/// Lower-case hex SHA-256 of a file, read in blocks.
pub fn file_sha256(path: &Path) -> std::io::Result<String> {
    let mut file = fs::File::open(path)?;
    let mut hasher = Sha256::new();
    let mut buffer = vec![0u8; 1 << 16];
    loop {
        let n = file.read(&mut buffer)?;
        if n == 0 {
            break;
        }
        hasher.update(&buffer[..n]);
    }
    Ok(hasher.finalize().iter().map(|b| format!("{b:02x}")).collect())
}

/// Write `done.json` atomically (the last write of a case) and drop any stale failure record.
pub fn write_done(case_dir: &Path, marker: &DoneMarker) -> std::io::Result<()> {
    let text = serde_json::to_vec_pretty(marker).map_err(std::io::Error::other)?;
    write_atomic(&case_dir.join(DONE_FILE), &text)?;
    match fs::remove_file(case_dir.join(FAILED_FILE)) {
        Err(e) if e.kind() != std::io::ErrorKind::NotFound => Err(e),
        _ => Ok(()),
    }
}

/// For a marker from another boot whose outputs just passed the SHA-256 check ([`case_state`]): sync the
/// outputs (they were read back intact, and the sync also flushes a disk's own write cache), then rewrite the
/// marker, synced, without the boot id, so later sweeps and collects need only the size check again instead
/// of hashing every output after each reboot. Returns the new marker.
pub fn mark_outputs_durable(case_dir: &Path, marker: &DoneMarker) -> std::io::Result<DoneMarker> {
    for output in &marker.outputs {
        fs::File::open(case_dir.join(&output.file))?.sync_all()?;
    }
    let durable = DoneMarker { unsynced_boot_id: None, ..marker.clone() };
    write_done(case_dir, &durable)?;
    Ok(durable)
}

/// Whether `marker` came from another boot with unsynced outputs (so [`case_state`] checks their SHA-256s).
pub fn from_another_boot(marker: &DoneMarker) -> bool {
    marker.unsynced_boot_id.as_ref().is_some_and(|id| Some(id) != boot_id().as_ref())
}

/// Write `failed.json` atomically.
pub fn write_failed(case_dir: &Path, record: &FailureRecord) -> std::io::Result<()> {
    let text = serde_json::to_vec_pretty(record).map_err(std::io::Error::other)?;
    write_atomic(&case_dir.join(FAILED_FILE), &text)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn finished(dir: &Path, sha: &str) -> DoneMarker {
        fs::create_dir_all(dir.join("figures")).unwrap();
        fs::write(dir.join("cells.csv"), "id\n0\n").unwrap();
        fs::write(dir.join("figures/a.png"), "png").unwrap();
        fs::write(dir.join(".cells.csv.1.0.tmp"), "partial").unwrap();
        let outputs = record_outputs(dir).unwrap();
        let marker = DoneMarker {
            case_id: "case-0000".into(),
            case_sha256: sha.into(),
            elapsed_s: 0.1,
            threads: 1,
            cpu_s: Some(0.08),
            runqueue_s: None,
            unsynced_boot_id: None,
            outputs,
        };
        write_done(dir, &marker).unwrap();
        marker
    }

    #[test]
    fn done_only_with_matching_hash_and_complete_outputs() {
        let dir = tempfile::tempdir().unwrap();
        assert!(matches!(case_state(dir.path(), "aa"), CaseState::NotDone { .. }));
        let marker = finished(dir.path(), "aa");
        let files: Vec<_> = marker.outputs.iter().map(|o| o.file.as_str()).collect();
        assert_eq!(files, ["cells.csv", "figures/a.png"]);
        assert_eq!(case_state(dir.path(), "aa"), CaseState::Done(marker.clone()));
        assert!(
            matches!(case_state(dir.path(), "bb"), CaseState::NotDone { ref reason } if reason.contains("changed"))
        );
        // A truncated output is caught by size; a same-size corruption only by the deep check.
        fs::write(dir.path().join("cells.csv"), "id\n").unwrap();
        assert!(
            matches!(case_state(dir.path(), "aa"), CaseState::NotDone { ref reason } if reason.contains("cells.csv"))
        );
        fs::write(dir.path().join("cells.csv"), "id\n7\n").unwrap();
        assert!(check_outputs(dir.path(), &marker, OutputCheck::Size).is_ok());
        assert!(check_outputs(dir.path(), &marker, OutputCheck::SizeAndChecksum)
            .unwrap_err()
            .contains("SHA-256"));
    }

    #[test]
    fn unsynced_outputs_from_another_boot_are_checked_by_hash() {
        let dir = tempfile::tempdir().unwrap();
        let mut marker = finished(dir.path(), "aa");
        // A same-size corruption, as a power cut can leave in outputs that were never synced.
        fs::write(dir.path().join("cells.csv"), "id\n9\n").unwrap();
        let state = |marker: &DoneMarker| {
            write_done(dir.path(), marker).unwrap();
            case_state(dir.path(), "aa")
        };
        // Synced outputs, or unsynced ones of this boot: sizes decide (a killed process loses no data).
        assert!(matches!(state(&marker), CaseState::Done(_)));
        if let Some(this_boot) = boot_id() {
            marker.unsynced_boot_id = Some(this_boot);
            assert!(matches!(state(&marker), CaseState::Done(_)));
        }
        marker.unsynced_boot_id = Some("another boot".into());
        assert!(
            matches!(state(&marker), CaseState::NotDone { ref reason } if reason.contains("SHA-256")),
            "{:?}",
            state(&marker)
        );
        fs::write(dir.path().join("cells.csv"), "id\n0\n").unwrap();
        assert!(matches!(state(&marker), CaseState::Done(_)));
    }

    #[test]
    fn failure_is_recorded_until_success() {
        let dir = tempfile::tempdir().unwrap();
        let record = FailureRecord {
            case_id: "c".into(),
            case_sha256: "aa".into(),
            kind: "solver".into(),
            error: "diverged".into(),
        };
        write_failed(dir.path(), &record).unwrap();
        assert_eq!(case_state(dir.path(), "aa"), CaseState::Failed(record));
        assert!(matches!(case_state(dir.path(), "bb"), CaseState::NotDone { .. }));
        finished(dir.path(), "aa");
        assert!(!dir.path().join(FAILED_FILE).exists());
        assert!(matches!(case_state(dir.path(), "aa"), CaseState::Done(_)));
    }
}
