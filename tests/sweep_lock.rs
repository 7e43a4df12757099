//! Two sweeps on one folder: while a local sweep runs, a second one on the same folder exits 2 naming the
//! holder; after the first is killed (SIGKILL leaves its lock behind), the next sweep takes the stale lock
//! over with a message and finishes the sweep. A lock planted for a live process is refused the same way.

mod common;

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use common::sweep::*;
use plumefield::sweep::lock::{LockHolder, LOCK_FILE};

fn sweep_args<'a>(sweep: &'a Path, out: &'a Path) -> Vec<&'a str> {
    vec!["sweep", sweep.to_str().unwrap(), "-o", out.to_str().unwrap(), "--jobs", "1", "--threads", "1"]
}

#[test]
fn a_second_sweep_on_a_busy_folder_exits_2_and_a_killed_ones_lock_is_taken_over() {
    let dir = tempfile::tempdir().unwrap();
    // 16 cases of about a tenth of a second each, one at a time: the first sweep is still running when the
    // second starts (checked below), and is killed long before it ends.
    let sweep = write_sweep(
        dir.path(),
        "seeds = 4\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [\"0.5 um/s\", \"1 um/s\", \"2 um/s\", \"4 um/s\"]\n",
    );
    let out = dir.path().join("out");
    let mut first = Command::new(binary())
        .args(sweep_args(&sweep, &out))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let started = Instant::now();
    while !out.join(LOCK_FILE).exists() {
        assert!(started.elapsed() < Duration::from_secs(60), "the first sweep never took its lock");
        std::thread::sleep(Duration::from_millis(2));
    }
    let second = pf(&sweep_args(&sweep, &out));
    assert!(first.try_wait().unwrap().is_none(), "the first sweep ended too early for this test");
    assert_eq!(second.status.code(), Some(2), "{}", show(&second));
    let message = text(&second.stderr);
    assert!(
        message.contains("another sweep is using") && message.contains(&format!("process {}", first.id())),
        "{message}"
    );

    first.kill().unwrap();
    first.wait().unwrap();
    assert!(out.join(LOCK_FILE).exists(), "SIGKILL leaves the lock behind");
    let third = pf(&sweep_args(&sweep, &out));
    assert_eq!(third.status.code(), Some(0), "{}", show(&third));
    assert!(text(&third.stderr).contains("took over the stale sweep lock"), "{}", show(&third));
    assert!(!out.join(LOCK_FILE).exists(), "a finished sweep removes its lock");
    assert_eq!(column(&out.join("sweep.csv"), "status"), vec!["done"; 16]);
}

#[test]
fn a_lock_of_a_live_process_is_refused_and_honoured_once_it_ends() {
    let dir = tempfile::tempdir().unwrap();
    let sweep = write_sweep(dir.path(), "[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [\"1 um/s\"]\n");
    let out = dir.path().join("out");
    std::fs::create_dir_all(&out).unwrap();
    let mut holder = Command::new("sleep").arg("60").spawn().unwrap();
    let record = LockHolder::for_process(holder.id(), "a local sweep");
    std::fs::write(out.join(LOCK_FILE), serde_json::to_vec(&record).unwrap()).unwrap();
    for args in
        [sweep_args(&sweep, &out), vec!["sweep", sweep.to_str().unwrap(), "--slurm", out.to_str().unwrap()]]
    {
        let refused = pf(&args);
        assert_eq!(refused.status.code(), Some(2), "{}", show(&refused));
        assert!(text(&refused.stderr).contains(&format!("process {}", holder.id())), "{}", show(&refused));
    }
    assert!(!out.join("cases").exists(), "a refused sweep runs nothing");
    holder.kill().unwrap();
    holder.wait().unwrap();
    let ran = pf(&sweep_args(&sweep, &out));
    assert_eq!(ran.status.code(), Some(0), "{}", show(&ran));
    assert!(text(&ran.stderr).contains("took over"), "{}", show(&ran));
}
