//! A run's output folder is the previous run or the whole new one: `run` is killed at seeded random moments
//! aimed at its write phase, and after each kill the folder must be one complete run (its marker lists exactly
//! the run's files, and they belong to one case), with the user's own file intact; a clean rerun leaves no
//! temporary file. Two runs on one folder: the second is refused (exit 2) while the first runs, and the lock of
//! a killed run is taken over. A folder that holds the case's inputs is refused before the solve.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

mod common;

fn folder(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("plumefield-folder-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

fn s(p: &Path) -> &str {
    p.to_str().expect("utf-8 path")
}

fn plumefield(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_plumefield")).args(args).output().expect("run the binary")
}

fn spawn(args: &[&str]) -> std::process::Child {
    Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(args)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("start the binary")
}

/// The files of `dir` (relative paths), recursively.
fn files(dir: &Path) -> BTreeSet<String> {
    fn walk(root: &Path, dir: &Path, out: &mut BTreeSet<String>) {
        for entry in std::fs::read_dir(dir).expect("read dir") {
            let path = entry.expect("entry").path();
            if path.is_dir() {
                walk(root, &path, out);
            } else {
                out.insert(path.strip_prefix(root).expect("inside").to_string_lossy().into_owned());
            }
        }
    }
    let mut out = BTreeSet::new();
    walk(dir, dir, &mut out);
    out
}

fn marker_files(dir: &Path) -> BTreeSet<String> {
    let text = std::fs::read(dir.join("run.json")).expect("the folder has its marker");
    let value: serde_json::Value = serde_json::from_slice(&text).expect("marker is JSON");
    let mut listed: BTreeSet<String> = value["files"]
        .as_array()
        .expect("files")
        .iter()
        .map(|f| f.as_str().expect("name").to_string())
        .collect();
    listed.insert("run.json".into());
    listed
}

fn case_sha(dir: &Path) -> String {
    let text = std::fs::read(dir.join("summary.json")).expect("summary.json");
    let value: serde_json::Value = serde_json::from_slice(&text).expect("summary is JSON");
    value["case_sha256"].as_str().expect("sha").to_string()
}

/// A small seeded generator (64-bit LCG, Knuth's MMIX constants): the kill moments are reproducible.
struct Lcg(u64);
impl Lcg {
    fn uniform(&mut self) -> f64 {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

#[test]
fn a_killed_run_leaves_the_old_run_or_the_whole_new_one() {
    let dir = folder("kill");
    // Two cases whose outputs differ (secretion rate), figures on so that the write phase is long.
    let cases: Vec<PathBuf> = ["1000 /h", "3000 /h"]
        .iter()
        .enumerate()
        .map(|(k, rate)| {
            let path = dir.join(format!("case{k}.toml"));
            let text = common::small_chamber(&[
                ("cells.secretion_rate", &format!("\"{rate}\"")),
                ("output.figures", "true"),
            ]);
            std::fs::write(&path, text).expect("write case");
            path
        })
        .collect();
    // Reference outputs of each case, and how long a run takes here.
    let mut references = Vec::new();
    let mut duration = Duration::ZERO;
    for (k, case) in cases.iter().enumerate() {
        let reference = dir.join(format!("reference{k}"));
        let started = Instant::now();
        let out = plumefield(&["run", s(case), "-o", s(&reference), "--threads", "1"]);
        duration = duration.max(started.elapsed());
        assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
        references
            .push((case_sha(&reference), std::fs::read(reference.join("cells.csv")).expect("cells.csv")));
    }
    let out = dir.join("out");
    let first = plumefield(&["run", s(&cases[0]), "-o", s(&out), "--threads", "1"]);
    assert_eq!(first.status.code(), Some(0));
    std::fs::write(out.join("notes.txt"), "the user's own notes").expect("user file");

    let mut random = Lcg(20261205);
    for kill in 0..8 {
        let case = &cases[(kill + 1) % 2];
        // Aimed at the write phase: the second half of a run, and a little after.
        let at = duration.mul_f64(0.4 + 0.8 * random.uniform());
        let mut child = spawn(&["run", s(case), "-o", s(&out), "--threads", "1"]);
        std::thread::sleep(at);
        let _ = child.kill();
        let _ = child.wait();
        let present = files(&out);
        let listed = marker_files(&out);
        let expected: BTreeSet<String> = listed.iter().cloned().chain(["notes.txt".to_string()]).collect();
        assert_eq!(present, expected, "kill {kill} at {at:?}: the folder is not exactly one run");
        let sha = case_sha(&out);
        let (_, cells) =
            references.iter().find(|(r, _)| *r == sha).expect("summary.json of one of the cases");
        assert_eq!(
            &std::fs::read(out.join("cells.csv")).expect("cells.csv"),
            cells,
            "kill {kill}: mixed files"
        );
        assert_eq!(std::fs::read_to_string(out.join("notes.txt")).expect("notes"), "the user's own notes");
    }
    // A clean rerun: no temporary files anywhere, nothing beside the folder.
    let rerun = plumefield(&["run", s(&cases[0]), "-o", s(&out), "--threads", "1"]);
    assert_eq!(rerun.status.code(), Some(0), "{}", String::from_utf8_lossy(&rerun.stderr));
    assert!(files(&out).iter().all(|f| !f.ends_with(".tmp")), "{:?}", files(&out));
    assert!(!dir.join(".out.partial").exists() && !dir.join(".out.lock").exists());
    // figures = false drops the earlier run's figures.
    let no_figures = dir.join("no_figures.toml");
    std::fs::write(&no_figures, common::small_chamber(&[])).expect("write");
    let plain = plumefield(&["run", s(&no_figures), "-o", s(&out), "--threads", "1"]);
    assert_eq!(plain.status.code(), Some(0));
    assert!(!files(&out).iter().any(|f| f.starts_with("figures")), "{:?}", files(&out));
    assert!(out.join("notes.txt").exists());
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn two_runs_on_one_folder_and_folders_holding_inputs() {
    let dir = folder("lock");
    // Large enough to run for a while (about a second or more).
    let case = dir.join("slow.toml");
    std::fs::write(
        &case,
        common::small_chamber(&[
            ("chamber.size", r#"["192 um", "96 um", "96 um"]"#),
            ("grid.spacing", r#""1.5 um""#),
        ]),
    )
    .expect("write case");
    let out = dir.join("out");
    let mut first = spawn(&["run", s(&case), "-o", s(&out), "--threads", "1"]);
    let lock = dir.join(".out.lock");
    let started = Instant::now();
    while !lock.exists() {
        assert!(started.elapsed() < Duration::from_secs(60), "the first run never took its lock");
        std::thread::sleep(Duration::from_millis(10));
    }
    let second = plumefield(&["run", s(&case), "-o", s(&out), "--threads", "1"]);
    let message = String::from_utf8_lossy(&second.stderr);
    assert!(first.try_wait().expect("poll").is_none(), "the first run ended too early for this test");
    assert_eq!(second.status.code(), Some(2), "{message}");
    assert!(message.contains("another run is using"), "{message}");
    // Killed: its lock is stale and the next run takes it over.
    let _ = first.kill();
    let _ = first.wait();
    let small = dir.join("small.toml");
    std::fs::write(&small, common::small_chamber(&[])).expect("write");
    let third = plumefield(&["run", s(&small), "-o", s(&out), "--threads", "1"]);
    assert_eq!(third.status.code(), Some(0), "{}", String::from_utf8_lossy(&third.stderr));
    assert!(!lock.exists());

    // The case's own folder as the output folder: refused before the solve, nothing written.
    let before = files(&dir);
    let own = plumefield(&["run", s(&small), "-o", s(&dir)]);
    assert_eq!(own.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&own.stderr).contains("which this case reads"));
    assert_eq!(files(&dir), before);
    // A file, or /dev/null, as the output folder.
    for bad in [small.as_path(), Path::new("/dev/null")] {
        let out = plumefield(&["run", s(&small), "-o", s(bad)]);
        assert_eq!(out.status.code(), Some(2), "{}", String::from_utf8_lossy(&out.stderr));
        assert!(String::from_utf8_lossy(&out.stderr).contains("is not a folder"));
    }
    let _ = std::fs::remove_dir_all(&dir);
}
