//! What the sweep end-to-end tests share: the tiny example base case, sweep files in a temporary folder, and
//! the real binary.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The example sweeps' base case (a 48 × 24 × 16 grid with six cells: about a tenth of a second per case), the
/// one `scripts/bench_sweep` uses too.
pub const BASE: &str = include_str!("../../cases/tiny_sweep_base.toml");

pub fn binary() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_plumefield"))
}

/// Write `base.toml` and `sweep.toml` (whose text is `sweep`, after a `base = "base.toml"` line) into `dir`.
pub fn write_sweep(dir: &Path, sweep: &str) -> PathBuf {
    std::fs::write(dir.join("base.toml"), BASE).unwrap();
    let path = dir.join("sweep.toml");
    std::fs::write(&path, format!("base = \"base.toml\"\n{sweep}")).unwrap();
    path
}

pub fn pf(args: &[&str]) -> Output {
    Command::new(binary()).args(args).output().expect("cannot start plumefield")
}

pub fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

/// Print both streams so a failing test shows what the program said.
pub fn show(output: &Output) -> String {
    format!(
        "exit {:?}\n--- stdout\n{}--- stderr\n{}",
        output.status.code(),
        text(&output.stdout),
        text(&output.stderr)
    )
}

/// Rows of a CSV file as (header, rows of fields); quoted fields (a `warnings` text with commas) read whole.
pub fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut reader =
        csv::Reader::from_path(path).unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
    let header = reader.headers().expect("a header").iter().map(str::to_string).collect();
    let rows = reader
        .records()
        .map(|r| r.unwrap_or_else(|e| panic!("{}: {e}", path.display())).iter().map(str::to_string).collect())
        .collect();
    (header, rows)
}

/// The value of `column` in every row.
pub fn column(path: &Path, column: &str) -> Vec<String> {
    let (header, rows) = read_csv(path);
    let k =
        header.iter().position(|h| h == column).unwrap_or_else(|| panic!("no column {column} in {header:?}"));
    rows.into_iter().map(|r| r[k].clone()).collect()
}

/// Check, byte by byte, every output that `done.json` of `case_dir` lists (size and SHA-256), and that
/// cells.csv and summary.json read back. Returns the marker text.
pub fn assert_case_intact(case_dir: &Path) -> String {
    use sha2::{Digest, Sha256};
    let marker_text = std::fs::read_to_string(case_dir.join("done.json")).unwrap();
    let marker: serde_json::Value = serde_json::from_str(&marker_text).unwrap();
    let outputs = marker["outputs"].as_array().unwrap();
    let files: Vec<&str> = outputs.iter().map(|o| o["file"].as_str().unwrap()).collect();
    for needed in ["case.toml", "cells.csv", "fields.h5", "fields.xmf", "summary.json"] {
        assert!(
            files.contains(&needed),
            "{}: done.json does not list {needed}: {files:?}",
            case_dir.display()
        );
    }
    for output in outputs {
        let path = case_dir.join(output["file"].as_str().unwrap());
        let bytes = std::fs::read(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        assert_eq!(bytes.len() as u64, output["bytes"].as_u64().unwrap(), "{}", path.display());
        let sha: String = Sha256::digest(&bytes).iter().map(|b| format!("{b:02x}")).collect();
        assert_eq!(sha, output["sha256"].as_str().unwrap(), "{} changed after done.json", path.display());
    }
    let summary: serde_json::Value =
        serde_json::from_slice(&std::fs::read(case_dir.join("summary.json")).unwrap()).unwrap();
    assert_eq!(summary["case_sha256"], marker["case_sha256"], "{}", case_dir.display());
    let (_, rows) = read_csv(&case_dir.join("cells.csv"));
    assert_eq!(rows.len(), 6, "{}: cells.csv should have 6 rows", case_dir.display());
    // No temporary file is left next to the outputs of a finished case.
    for entry in std::fs::read_dir(case_dir).unwrap() {
        let name = entry.unwrap().file_name().to_string_lossy().into_owned();
        assert!(!name.ends_with(".tmp"), "{}: leftover temporary {name}", case_dir.display());
    }
    marker_text
}
