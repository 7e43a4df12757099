//! `plumefield sweep --slurm` on a real Slurm cluster: submit a 6-case sweep as a job array with a dependent
//! collect job, wait (bounded), and check that its `sweep.csv` equals the one of a local run of the same
//! sweep; then lose two cases and check that re-submitting runs only those two. When the cluster's
//! MaxArraySize is below 6 (`scripts/test` sets 4), the sweep is split into several array jobs, as a sweep
//! larger than a real cluster's limit would be, and the collect job waits for all of them.
//!
//! Needs a cluster: `scripts/slurm-start` starts a private single-node one and prints the `SLURM_CONF` to
//! export (`scripts/test` does this and sets PLUMEFIELD_REQUIRE_SLURM=1, so in CI the test cannot skip).
//! Without `SLURM_CONF` and `sbatch`, the test prints why and skips.

mod common;

use std::path::Path;
use std::process::Command;
use std::time::{Duration, Instant};

use common::sweep::*;

const WAIT: Duration = Duration::from_secs(240);

/// None when a cluster is available, else the reason to skip.
fn no_cluster() -> Option<String> {
    if std::env::var_os("SLURM_CONF").is_none() {
        return Some("SLURM_CONF is not set (start a local cluster with scripts/slurm-start)".into());
    }
    match Command::new("sbatch").arg("--version").output() {
        Ok(out) if out.status.success() => None,
        Ok(out) => Some(format!("sbatch --version failed: {}", text(&out.stderr))),
        Err(e) => Some(format!("sbatch cannot be run: {e}")),
    }
}

fn job_is_queued(job: &str) -> bool {
    let out = Command::new("squeue").args(["-h", "-j", job]).output().expect("squeue");
    // An id that has left the queue is either "Invalid job id" (exit 1) or an empty listing.
    out.status.success() && !text(&out.stdout).trim().is_empty()
}

/// Submit with `--slurm DIR --submit`, wait until the collect job has left the queue; returns its id.
fn submit_and_wait(sweep: &Path, dir: &Path, extra: &[&str]) -> String {
    let mut args = vec!["sweep", sweep.to_str().unwrap(), "--slurm", dir.to_str().unwrap(), "--submit"];
    args.extend_from_slice(extra);
    let out = pf(&args);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let stdout = text(&out.stdout);
    let line =
        stdout.lines().find(|l| l.starts_with("submitted array job")).unwrap_or_else(|| panic!("{stdout}"));
    // "submitted array job(s) ID[,ID…] and collect job ID"
    let words: Vec<&str> = line.split_whitespace().collect();
    let (arrays, collect) = (words[3].to_string(), words[7].to_string());
    let started = Instant::now();
    while arrays.split(',').any(job_is_queued) || job_is_queued(&collect) {
        assert!(
            started.elapsed() < WAIT,
            "jobs {arrays}/{collect} still queued after {WAIT:?}:\n{}",
            squeue()
        );
        std::thread::sleep(Duration::from_millis(250));
    }
    eprintln!(
        "array job(s) {arrays} and collect job {collect} finished in {:.1} s",
        started.elapsed().as_secs_f64()
    );
    collect
}

/// The cluster's MaxArraySize (Slurm's default 1001 when `scontrol show config` does not say).
fn max_array_size() -> usize {
    let out = Command::new("scontrol").args(["show", "config"]).output().expect("scontrol");
    text(&out.stdout)
        .lines()
        .find_map(|l| {
            let (key, value) = l.split_once('=')?;
            (key.trim() == "MaxArraySize").then(|| value.trim().parse().ok())?
        })
        .unwrap_or(1001)
}

/// `0-3,5%2` → [0, 1, 2, 3, 5].
fn expand_spec(spec: &str) -> Vec<usize> {
    let spec = spec.split('%').next().unwrap();
    spec.split(',')
        .flat_map(|part| match part.split_once('-') {
            Some((a, b)) => (a.parse::<usize>().unwrap()..=b.parse().unwrap()).collect::<Vec<_>>(),
            None => vec![part.parse().unwrap()],
        })
        .collect()
}

/// The array scripts in `dir/slurm` (sorted by name), each with its array task ids and the cases they run.
fn array_scripts(dir: &Path) -> Vec<(String, Vec<usize>, Vec<usize>)> {
    let mut names: Vec<String> = std::fs::read_dir(dir.join("slurm"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with("array") && n.ends_with(".sbatch"))
        .collect();
    names.sort();
    names
        .into_iter()
        .map(|name| {
            let script = std::fs::read_to_string(dir.join("slurm").join(&name)).unwrap();
            for line in ["#SBATCH --cpus-per-task=1\n", "#SBATCH --mem=", "#SBATCH --time=", "task-%A_%a.log"]
            {
                assert!(script.contains(line), "{line:?} missing from {name}:\n{script}");
            }
            let spec = script.lines().find_map(|l| l.strip_prefix("#SBATCH --array=")).unwrap();
            let ids = expand_spec(spec);
            let offset = script
                .split("--task \"$((")
                .nth(1)
                .map_or(0, |rest| rest.split(' ').next().unwrap().parse::<usize>().unwrap());
            let cases = ids.iter().map(|i| offset + i).collect();
            (name, ids, cases)
        })
        .collect()
}

/// Check that the array scripts of `dir` run exactly `cases`, in as few array jobs as the cluster's
/// MaxArraySize allows, with every task id below it.
fn assert_arrays_cover(dir: &Path, cases: &[usize], max: usize) {
    let scripts = array_scripts(dir);
    let covered: Vec<usize> = scripts.iter().flat_map(|(_, _, c)| c.clone()).collect();
    assert_eq!(covered, cases, "{scripts:?}");
    assert!(
        scripts.iter().all(|(_, ids, _)| ids.iter().all(|&i| i < max)),
        "MaxArraySize {max}: {scripts:?}"
    );
    let span = cases.last().unwrap() - cases[0] + 1;
    assert_eq!(scripts.len(), span.div_ceil(max).min(cases.len()), "MaxArraySize {max}: {scripts:?}");
}

fn squeue() -> String {
    Command::new("squeue").output().map(|o| text(&o.stdout)).unwrap_or_default()
}

fn log_text(dir: &Path) -> String {
    let mut all = String::new();
    if let Ok(entries) = std::fs::read_dir(dir.join("slurm/logs")) {
        for entry in entries.flatten() {
            all.push_str(&format!(
                "--- {}\n{}",
                entry.path().display(),
                std::fs::read_to_string(entry.path()).unwrap_or_default()
            ));
        }
    }
    all
}

#[test]
fn slurm_array_gives_the_local_table_and_resubmits_only_missing_tasks() {
    if let Some(reason) = no_cluster() {
        assert!(
            std::env::var("PLUMEFIELD_REQUIRE_SLURM").as_deref() != Ok("1"),
            "a Slurm cluster is required: {reason}"
        );
        eprintln!("skipped: {reason}");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let sweep = write_sweep(
        dir.path(),
        "seeds = 2\n[[axis]]\nkey = \"flow.mean_velocity\"\nfrom = 0.5\nto = 2\ncount = 3\nscale = \"log\"\nunit = \"um/s\"\n",
    );
    let local = dir.path().join("local");
    let out = pf(&["sweep", sweep.to_str().unwrap(), "-o", local.to_str().unwrap(), "--jobs", "2"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let local_csv = std::fs::read_to_string(local.join("sweep.csv")).unwrap();
    assert_eq!(local_csv.lines().count(), 7);

    let cluster = dir.path().join("cluster");
    let max = max_array_size();
    eprintln!("the cluster's MaxArraySize is {max}");
    let collect_job = submit_and_wait(&sweep, &cluster, &[]);
    assert_arrays_cover(&cluster, &[0, 1, 2, 3, 4, 5], max);
    if max >= 6 {
        let script = std::fs::read_to_string(cluster.join("slurm/array.sbatch")).unwrap();
        assert!(script.contains("#SBATCH --array=0-5\n"), "{script}");
    }
    let cluster_csv = std::fs::read_to_string(cluster.join("sweep.csv"))
        .unwrap_or_else(|e| panic!("no sweep.csv from the collect job: {e}\n{}", log_text(&cluster)));
    assert_eq!(
        cluster_csv,
        local_csv,
        "the cluster's table differs from the local one\n{}",
        log_text(&cluster)
    );
    let logs: Vec<String> = std::fs::read_dir(cluster.join("slurm/logs"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(logs.iter().filter(|l| l.starts_with("task-")).count(), 6, "{logs:?}");
    assert!(logs.contains(&format!("collect-{collect_job}.log")), "{logs:?}");
    for i in 0..6 {
        assert_case_intact(&cluster.join(format!("cases/case-{i:04}")));
    }

    // Lose two cases (one marker, one whole folder): only they are submitted again.
    let kept = std::fs::read(cluster.join("cases/case-0000/done.json")).unwrap();
    std::fs::remove_file(cluster.join("cases/case-0003/done.json")).unwrap();
    std::fs::remove_dir_all(cluster.join("cases/case-0004")).unwrap();
    std::fs::remove_file(cluster.join("sweep.csv")).unwrap();
    let out =
        pf(&["sweep", sweep.to_str().unwrap(), "--slurm", cluster.to_str().unwrap(), "--max-running", "1"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    assert!(text(&out.stdout).contains("2 of 6 cases"), "{}", show(&out));
    assert_arrays_cover(&cluster, &[3, 4], max);
    let script = std::fs::read_to_string(cluster.join("slurm/array.sbatch")).unwrap();
    let spec = if max >= 5 { "3-4%1" } else { "0-1%1" };
    assert!(script.contains(&format!("#SBATCH --array={spec}\n")), "{script}");
    assert!(!cluster.join("sweep.csv").exists(), "writing the scripts submits nothing");
    submit_and_wait(&sweep, &cluster, &["--max-running", "1"]);
    assert_eq!(
        std::fs::read_to_string(cluster.join("sweep.csv")).unwrap(),
        local_csv,
        "{}",
        log_text(&cluster)
    );
    assert_eq!(std::fs::read(cluster.join("cases/case-0000/done.json")).unwrap(), kept, "case 0 ran again");
    for i in 0..6 {
        assert_case_intact(&cluster.join(format!("cases/case-{i:04}")));
    }

    // Everything done: nothing to submit, the table is collected at once.
    let out = pf(&["sweep", sweep.to_str().unwrap(), "--slurm", cluster.to_str().unwrap(), "--submit"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    assert!(text(&out.stdout).contains("nothing to submit"), "{}", show(&out));
}
