//! A run whose outputs cannot be written (a full disk, here a file-size limit: `RLIMIT_FSIZE` with `SIGXFSZ`
//! ignored, so a write past the limit fails with EFBIG as it would with ENOSPC) exits 1 with one sentence, no
//! HDF5 library dump, leaves the previous complete run untouched and no partial or temporary file behind.

use std::collections::BTreeMap;
use std::os::unix::process::CommandExt;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

mod common;

/// Every file under `dir` with its bytes.
fn contents(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    fn walk(root: &Path, dir: &Path, out: &mut BTreeMap<PathBuf, Vec<u8>>) {
        for entry in std::fs::read_dir(dir).expect("read dir") {
            let path = entry.expect("entry").path();
            if path.is_dir() {
                walk(root, &path, out);
            } else {
                let bytes = std::fs::read(&path).expect("read");
                out.insert(path.strip_prefix(root).expect("inside").to_path_buf(), bytes);
            }
        }
    }
    let mut out = BTreeMap::new();
    walk(dir, dir, &mut out);
    out
}

/// `plumefield run CASE -o OUT` where no file may grow beyond `limit` bytes.
fn run_with_file_size_limit(case: &Path, out: &Path, limit: u64) -> Output {
    let mut command = Command::new(env!("CARGO_BIN_EXE_plumefield"));
    command.args(["run", case.to_str().unwrap(), "-o", out.to_str().unwrap(), "--threads", "1"]);
    // SAFETY: only async-signal-safe calls (signal, setrlimit) between fork and exec.
    unsafe {
        command.pre_exec(move || {
            libc::signal(libc::SIGXFSZ, libc::SIG_IGN);
            let rlimit = libc::rlimit { rlim_cur: limit, rlim_max: limit };
            if libc::setrlimit(libc::RLIMIT_FSIZE, &rlimit) != 0 {
                return Err(std::io::Error::last_os_error());
            }
            Ok(())
        });
    }
    command.output().expect("run the binary")
}

#[test]
fn a_failed_write_exits_1_with_one_sentence_and_keeps_the_previous_run() {
    let dir = tempfile::tempdir().unwrap();
    let case = |name: &str, rate: &str| {
        let path = dir.path().join(name);
        std::fs::write(&path, common::small_chamber(&[("cells.secretion_rate", rate)])).unwrap();
        path
    };
    let first = case("first.toml", "\"1000 /h\"");
    let second = case("second.toml", "\"3000 /h\"");
    let out = dir.path().join("out");
    let done = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["run", first.to_str().unwrap(), "-o", out.to_str().unwrap(), "--threads", "1"])
        .output()
        .unwrap();
    assert_eq!(done.status.code(), Some(0), "{}", String::from_utf8_lossy(&done.stderr));
    let before = contents(&out);
    let largest = before.values().map(Vec::len).max().unwrap() as u64;

    // Small enough that fields.h5 cannot be written, large enough for the small files before it.
    for limit in [4096, largest / 2] {
        let failed = run_with_file_size_limit(&second, &out, limit);
        let stderr = String::from_utf8_lossy(&failed.stderr);
        assert_eq!(failed.status.code(), Some(1), "limit {limit}: {stderr}");
        let lines: Vec<&str> = stderr.lines().filter(|l| !l.starts_with("warning:")).collect();
        assert_eq!(lines.len(), 1, "limit {limit}: one sentence, got:\n{stderr}");
        let dump = ["HDF5-DIAG", "#000", "errno =", "(): "].iter().any(|m| stderr.contains(m));
        assert!(!dump, "limit {limit}: a library dump:\n{stderr}");
        assert!(lines[0].contains("out"), "limit {limit}: the sentence names the folder: {stderr}");
        assert_eq!(contents(&out), before, "limit {limit}: the previous run changed");
        let beside: Vec<String> = std::fs::read_dir(dir.path())
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .filter(|n| n != "out" && !n.ends_with(".toml"))
            .collect();
        assert!(beside.is_empty(), "limit {limit}: left beside the folder: {beside:?}");
    }
}
