//! Inputs that cannot fit or cannot be read are refused before anything is allocated or written: each exits
//! with code 2, names the key (or option, or file) to change, writes nothing, and finishes within a bound on
//! time and address space (the binary runs under `ulimit -v`, so an attempt to allocate terabytes would abort
//! instead of being refused).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::{Duration, Instant};

mod common;

/// Address space the binary may map (2 GiB: far above what refusing needs, far below what the cases want).
const ADDRESS_SPACE_KIB: u64 = 2 * 1024 * 1024;
/// Time a refusal may take (generous for a loaded machine).
const REFUSAL_TIME: Duration = Duration::from_secs(10);

fn folder(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("plumefield-bad-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

/// The binary under `ulimit -v`, with its time.
fn bounded(args: &[&str], env: &[(&str, &str)]) -> (Output, Duration) {
    let mut command = Command::new("sh");
    command
        .arg("-c")
        .arg(format!("ulimit -v {ADDRESS_SPACE_KIB} && exec \"$0\" \"$@\""))
        .arg(env!("CARGO_BIN_EXE_plumefield"))
        .args(args);
    for (k, v) in env {
        command.env(k, v);
    }
    let started = Instant::now();
    let output = command.output().expect("run the binary");
    (output, started.elapsed())
}

/// Exit code 2 within the time bound, stderr naming every one of `names`, and `out` not created.
fn refused(args: &[&str], names: &[&str], out: &Path) -> String {
    refused_with_env(args, &[], names, out)
}

fn refused_with_env(args: &[&str], env: &[(&str, &str)], names: &[&str], out: &Path) -> String {
    let (output, took) = bounded(args, env);
    let stderr = String::from_utf8_lossy(&output.stderr).into_owned();
    assert_eq!(output.status.code(), Some(2), "{args:?}: {stderr}");
    assert!(took < REFUSAL_TIME, "{args:?} took {took:?} to refuse");
    for name in names {
        assert!(stderr.contains(name), "{args:?}: the message does not name {name}: {stderr}");
    }
    assert_eq!(stderr.trim().lines().count(), 1, "{args:?}: not one line: {stderr}");
    assert!(!out.exists(), "{args:?} wrote {}", out.display());
    stderr
}

fn write_case(dir: &Path, name: &str, changes: &[(&str, &str)]) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, common::small_chamber(changes)).expect("write case");
    path
}

fn s(p: &Path) -> &str {
    p.to_str().expect("utf-8 path")
}

#[test]
fn grids_that_cannot_fit_are_refused_by_run_and_named_by_estimate() {
    let dir = folder("grids");
    let out = dir.join("out");
    // 2 x 2 x 2.5 cm at 2.5 um: 6.4e11 grid cells, hundreds of terabytes.
    let chamber = write_case(
        &dir,
        "chamber.toml",
        &[("chamber.size", r#"["2 cm", "2 cm", "2.5 cm"]"#), ("grid.spacing", r#""2.5 um""#)],
    );
    let message = refused(&["run", s(&chamber), "-o", s(&out)], &["grid.spacing", "TB"], &out);
    assert!(message.contains("chamber.size"), "{message}");
    // The limit may come from --max-memory or the Slurm allocation; the message says which.
    refused(&["run", s(&chamber), "-o", s(&out), "--max-memory", "1G"], &["--max-memory"], &out);
    refused_with_env(
        &["run", s(&chamber), "-o", s(&out)],
        &[("SLURM_MEM_PER_NODE", "4000")],
        &["SLURM_MEM_PER_NODE"],
        &out,
    );
    // A small case over a tiny --max-memory is refused too; under a generous one it is not (checked by
    // the end-to-end runs elsewhere).
    let small = write_case(&dir, "small.toml", &[]);
    refused(
        &["run", s(&small), "-o", s(&out), "--max-memory", "1 MB"],
        &["--max-memory", "grid.spacing"],
        &out,
    );

    // A tiny radius sets a tiny spacing through cells_per_radius.
    let radius = write_case(
        &dir,
        "radius.toml",
        &[
            ("chamber.size", r#"["400 um", "200 um", "100 um"]"#),
            ("grid.spacing", ""),
            ("grid.cells_per_radius", "4"),
            ("cells.radius", r#""0.1 um""#),
            ("cells.layout", r#"{ kind = "random", count = 6, min_gap = "0.1 um", seed = 3 }"#),
        ],
    );
    refused(&["run", s(&radius), "-o", s(&out)], &["grid.cells_per_radius"], &out);

    // estimate warns (exit 0) and compares with the node memory the user gives.
    let (output, took) = bounded(&["estimate", s(&chamber), "--node-memory", "192G"], &[]);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{stderr}");
    assert!(took < REFUSAL_TIME);
    assert!(stderr.contains("warning:") && stderr.contains("--node-memory"), "{stderr}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn sizes_that_overflow_name_their_real_cause() {
    let dir = folder("sizes");
    let out = dir.join("out");
    let nm = write_case(
        &dir,
        "nm.toml",
        &[("grid.spacing", r#""1 nm""#), ("chamber.size", r#"["400 um", "48 um", "48 um"]"#)],
    );
    refused(&["run", s(&nm), "-o", s(&out)], &["grid.spacing"], &out);
    refused(&["estimate", s(&nm)], &["grid.spacing"], &out);
    // An absurd chamber is the chamber's fault, whichever key sets the spacing.
    for grid in [("grid.spacing", r#""2 um""#), ("grid.cells_per_radius", "4")] {
        let changes = [("chamber.size", "[1e300, 1e300, 1e300]"), ("grid.spacing", ""), grid];
        let huge = write_case(&dir, "huge.toml", &changes);
        let message = refused(&["run", s(&huge), "-o", s(&out)], &[": chamber.size[0] = 1.000e300 m"], &out);
        assert!(!message.contains("divide"), "{message}");
    }
    // A cell wider than the chamber, with the spacing set by the radius: the radius, not divisibility.
    let wide = write_case(
        &dir,
        "wide.toml",
        &[
            ("chamber.size", r#"["96 um", "96 um", "96 um"]"#),
            ("grid.spacing", ""),
            ("grid.cells_per_radius", "4"),
            ("cells.radius", r#""100 um""#),
            ("cells.layout", r#"{ kind = "random", count = 1, min_gap = "2 um", seed = 3 }"#),
        ],
    );
    let message =
        refused(&["run", s(&wide), "-o", s(&out)], &["cells.radius", "wider than the chamber"], &out);
    assert!(!message.contains("divide"), "{message}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_duplicate_key_is_named() {
    let dir = folder("duplicate");
    let out = dir.join("out");
    let text = common::small_chamber(&[])
        .replace("[solve]\n", "[solve]\nmax_iterations = 50\nmax_iterations = 60\n");
    let path = dir.join("dup.toml");
    std::fs::write(&path, text).expect("write");
    refused(&["run", s(&path), "-o", s(&out)], &["solve.max_iterations is given twice"], &out);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn pipes_devices_and_large_files_are_not_read() {
    let dir = folder("files");
    let out = dir.join("out");
    refused(&["run", "/dev/zero", "-o", s(&out)], &["/dev/zero", "not a regular file"], &out);
    refused(&["estimate", s(&dir)], &["not a regular file"], &out);
    // A FIFO with no writer: opening it would block forever.
    let fifo = dir.join("case.toml");
    let made = Command::new("mkfifo").arg(&fifo).status().expect("mkfifo");
    assert!(made.success());
    refused(&["run", s(&fifo), "-o", s(&out)], &["not a regular file"], &out);
    // Larger than a case file may be.
    let big = dir.join("big.toml");
    std::fs::write(&big, vec![b'#'; 9 << 20]).expect("write");
    refused(&["estimate", s(&big)], &["big.toml", "bytes"], &out);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn impossible_thread_counts_are_refused_at_once() {
    let dir = folder("threads");
    let out = dir.join("out");
    let case = write_case(&dir, "case.toml", &[]);
    refused(&["run", s(&case), "-o", s(&out), "--threads", "100000"], &["--threads 100000"], &out);
    refused(&["run", s(&case), "-o", s(&out), "--threads", "0"], &["--threads"], &out);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn sweep_axes_and_seeds_are_bounded_before_expansion() {
    let dir = folder("sweep");
    let out = dir.join("out");
    std::fs::write(dir.join("base.toml"), common::small_chamber(&[])).expect("write base");
    let axis = "base = \"base.toml\"\n[[axis]]\nkey = \"flow.mean_velocity\"\nfrom = \"1 um/s\"\nto = \"2 um/s\"\ncount = 1000000000\n";
    let sweep = dir.join("axis.toml");
    std::fs::write(&sweep, axis).expect("write sweep");
    refused(&["sweep", s(&sweep), "--plan", "-o", s(&out)], &["count = 1000000000", "100000"], &out);
    let seeds = "base = \"base.toml\"\nseeds = 1000000000\n";
    std::fs::write(&sweep, seeds).expect("write sweep");
    refused(&["sweep", s(&sweep), "--plan", "-o", s(&out)], &["seeds"], &out);
    let _ = std::fs::remove_dir_all(&dir);
}
