//! Checkpoint and restart of a transient run: a run is killed with SIGKILL after its first checkpoint, resumed
//! with `--resume`, and its outputs are compared with an uninterrupted run of the same case — every output
//! time (including those written before the kill), the final cells.csv and the time series. A resume with an
//! edited case file is refused with exit code 2.

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

mod common;

/// Small chamber, fixed steps, a flow change and a late sensing window, so that the resumed part crosses an
/// event and output times; two cells get the self/neighbour split, whose own fields the checkpoint carries.
/// About 240 steps on a 40×20×10 grid: a few seconds.
fn case_text(end_time: &str) -> String {
    case_with(end_time, "[0, 3]")
}

/// [`case_text`] with `sensing.decompose` set to `decompose` (left out when empty).
fn case_with(end_time: &str, decompose: &str) -> String {
    let end_time = format!("\"{end_time}\"");
    let mut changes = vec![
        ("chamber.size", r#"["160 um", "80 um", "40 um"]"#),
        ("grid.spacing", r#""4 um""#),
        ("flow.mean_velocity", r#""1 um/s""#),
        ("flow.change_at", r#""5 min""#),
        ("flow.mean_velocity_after", r#""3 um/s""#),
        ("ligand.decay_rate", r#""1e-4 /s""#),
        ("ligand.inlet_concentration", "0.0"),
        ("cells.radius", r#""10 um""#),
        ("cells.layout", r#"{ kind = "random", count = 5, min_gap = "3 um", seed = 5 }"#),
        ("solve.mode", r#""transient""#),
        ("solve.end_time", &end_time),
        ("solve.time_step", r#""5 s""#),
        ("solve.output_every", r#""1 min""#),
        ("sensing.integration_time", r#""10 min""#),
        ("sensing.window_start", r#""2 min""#),
        ("output.fields", r#"["concentration", "velocity", "pressure"]"#),
    ];
    if !decompose.is_empty() {
        changes.push(("sensing.decompose", decompose));
    }
    common::small_chamber(&changes)
}

fn folder(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("plumefield-restart-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

/// Where a run into `dir` writes until it is complete.
fn staging(dir: &Path) -> PathBuf {
    let name = dir.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
    dir.with_file_name(format!(".{name}.partial"))
}

fn plumefield(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_plumefield")).args(args).output().expect("run the binary")
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap_or_default()
}

/// Every number of a CSV file, row by row.
fn csv_numbers(path: &Path) -> (String, Vec<Vec<f64>>) {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let mut lines = text.lines();
    let header = lines.next().unwrap_or_default().to_string();
    let rows = lines.map(|l| l.split(',').map(|v| v.parse::<f64>().expect("number")).collect()).collect();
    (header, rows)
}

fn max_relative_difference(a: &[f64], b: &[f64]) -> f64 {
    assert_eq!(a.len(), b.len());
    let scale = a.iter().chain(b).filter(|v| v.is_finite()).fold(0.0f64, |m, v| m.max(v.abs()));
    a.iter()
        .zip(b)
        .map(|(x, y)| {
            if x.is_nan() && y.is_nan() || x == y {
                0.0
            } else {
                (x - y).abs() / scale.max(f64::MIN_POSITIVE)
            }
        })
        .fold(0.0, f64::max)
}

/// Largest relative difference over the rows of two CSV files (per column, scaled by the column's largest value).
fn compare_csv(a: &Path, b: &Path) -> f64 {
    let (ha, ra) = csv_numbers(a);
    let (hb, rb) = csv_numbers(b);
    assert_eq!(ha, hb, "headers differ");
    assert_eq!(ra.len(), rb.len(), "row counts differ");
    let columns = ra.first().map_or(0, Vec::len);
    (0..columns)
        .map(|c| {
            let x: Vec<f64> = ra.iter().map(|r| r[c]).collect();
            let y: Vec<f64> = rb.iter().map(|r| r[c]).collect();
            max_relative_difference(&x, &y)
        })
        .fold(0.0, f64::max)
}

fn ligand_datasets(path: &Path) -> Vec<(String, Vec<f64>, Option<f64>)> {
    let file = hdf5::File::open(path).expect("open fields.h5");
    let group = file.group("ligand").expect("/ligand");
    let mut names = group.member_names().expect("members");
    names.sort();
    names
        .into_iter()
        .map(|name| {
            let ds = group.dataset(&name).expect("dataset");
            let time = ds.attr("time").ok().and_then(|a| a.read_scalar::<f64>().ok());
            (name, ds.read_raw::<f64>().expect("values"), time)
        })
        .collect()
}

#[test]
fn killed_run_resumes_to_the_uninterrupted_result() {
    let dir = folder("kill");
    let case = dir.join("case.toml");
    std::fs::write(&case, case_text("20 min")).expect("write case");

    let reference = dir.join("reference");
    let out = plumefield(&["run", s(&case), "-o", s(&reference)]);
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));

    // Interrupted run: SIGKILL as soon as the first checkpoint exists.
    let resumed = dir.join("resumed");
    let mut child = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["run", s(&case), "-o", s(&resumed), "--checkpoint-every", "7"])
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("start the run");
    // The run writes beside its output folder until it is complete (the folder is replaced whole).
    let checkpoint = staging(&resumed).join("checkpoint.bin");
    let started = Instant::now();
    while !checkpoint.exists() {
        assert!(child.try_wait().expect("poll").is_none(), "the run ended before writing a checkpoint");
        assert!(started.elapsed() < Duration::from_secs(120), "no checkpoint after two minutes");
        std::thread::sleep(Duration::from_millis(2));
    }
    child.kill().expect("SIGKILL");
    let _ = child.wait();
    assert!(
        !resumed.join("summary.json").exists(),
        "the run finished before the kill: the test would prove nothing"
    );
    assert!(!resumed.join("fields.h5").exists());

    let out = plumefield(&["run", s(&case), "-o", s(&resumed), "--resume", "--checkpoint-every", "7"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{stderr}");
    assert!(stderr.contains("resuming from"), "{stderr}");
    assert!(!checkpoint.exists(), "the checkpoint of a finished run is left behind");
    assert!(!resumed.join("transient_parts").exists());
    assert!(!staging(&resumed).exists(), "the staging folder of a finished run is left behind");

    let header = std::fs::read_to_string(reference.join("cells_timeseries.csv")).unwrap_or_default();
    assert!(header.lines().next().unwrap_or_default().ends_with("neighbour_bound_rate"), "no split columns");
    let cells = compare_csv(&reference.join("cells.csv"), &resumed.join("cells.csv"));
    let series = compare_csv(&reference.join("cells_timeseries.csv"), &resumed.join("cells_timeseries.csv"));
    println!("max relative difference: cells.csv {cells:.3e}, cells_timeseries.csv {series:.3e}");
    assert!(cells <= 1e-12 && series <= 1e-12, "cells.csv {cells:e}, cells_timeseries.csv {series:e}");
    // The split's own fields continue from the checkpoint bit for bit: its columns are the same text.
    for file in ["cells.csv", "cells_timeseries.csv"] {
        let split_part = |dir: &Path| -> Vec<String> {
            let text = std::fs::read_to_string(dir.join(file)).expect("read");
            let header: Vec<&str> = text.lines().next().unwrap_or_default().split(',').collect();
            let first = header.iter().position(|n| *n == "anisotropy_from_self_x").expect("split columns");
            text.lines().map(|l| l.split(',').skip(first).take(12).collect::<Vec<_>>().join(",")).collect()
        };
        assert_eq!(
            split_part(&reference),
            split_part(&resumed),
            "{file}: the split differs after the resume"
        );
    }

    let a = ligand_datasets(&reference.join("fields.h5"));
    let b = ligand_datasets(&resumed.join("fields.h5"));
    let names: Vec<&String> = a.iter().map(|d| &d.0).collect();
    assert_eq!(names, b.iter().map(|d| &d.0).collect::<Vec<_>>());
    // 20 output times (every minute) + final, steady reference, times.
    assert_eq!(a.len(), 23, "{names:?}");
    for ((name, x, tx), (_, y, ty)) in a.iter().zip(&b) {
        assert_eq!(tx, ty, "{name}: time attributes differ");
        let d = max_relative_difference(x, y);
        assert!(d <= 1e-12, "/ligand/{name}: max relative difference {d:e}");
    }
}

#[test]
fn resume_refuses_another_case_and_a_missing_checkpoint() {
    let dir = folder("refuse");
    let case = dir.join("case.toml");
    std::fs::write(&case, case_text("20 min")).expect("write case");
    let out_dir = dir.join("out");

    let out = plumefield(&["run", s(&case), "-o", s(&out_dir), "--resume"]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("no checkpoint.bin"), "{stderr}");

    // Leave a checkpoint behind: kill the run once it exists.
    let mut child = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["run", s(&case), "-o", s(&out_dir), "--checkpoint-every", "2 min"])
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("start the run");
    let checkpoint = staging(&out_dir).join("checkpoint.bin");
    let started = Instant::now();
    while !checkpoint.exists() && child.try_wait().expect("poll").is_none() {
        assert!(started.elapsed() < Duration::from_secs(120), "no checkpoint after two minutes");
        std::thread::sleep(Duration::from_millis(2));
    }
    let _ = child.kill();
    let _ = child.wait();
    assert!(checkpoint.exists(), "no checkpoint was written");

    let edited = dir.join("edited.toml");
    std::fs::write(&edited, case_text("25 min")).expect("write case");
    let out = plumefield(&["run", s(&edited), "-o", s(&out_dir), "--resume"]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("different case file"), "{stderr}");

    let out = plumefield(&["run", s(&case), "-o", s(&out_dir), "--checkpoint-every", "3 um"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--checkpoint-every"));
}

/// The own fields of the split run beside the total on the same step solver: the total and everything computed
/// from it must be the same bits with and without the split.
#[test]
fn the_split_leaves_the_main_results_unchanged() {
    let dir = folder("split");
    let with = dir.join("with.toml");
    std::fs::write(&with, case_text("6 min")).expect("write case");
    let without = dir.join("without.toml");
    std::fs::write(&without, case_with("6 min", "")).expect("write case");
    for (case, out) in [(&with, "with"), (&without, "without")] {
        let out = plumefield(&["run", s(case), "-o", s(&dir.join(out))]);
        assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    }
    for file in ["cells.csv", "cells_timeseries.csv"] {
        let read = |folder: &str| {
            let text = std::fs::read_to_string(dir.join(folder).join(file)).expect("read");
            let rows: Vec<Vec<String>> =
                text.lines().map(|l| l.split(',').map(str::to_string).collect()).collect();
            rows
        };
        let (a, b) = (read("with"), read("without"));
        assert_eq!(a.len(), b.len());
        assert!(a[0].len() > b[0].len(), "{file}: no split columns");
        assert!(
            !b[0].iter().any(|c| c.starts_with("anisotropy_from_")),
            "{file}: split columns without a split"
        );
        for (k, name) in b[0].iter().enumerate() {
            let j = a[0].iter().position(|n| n == name).unwrap_or_else(|| panic!("{file}: {name} missing"));
            for (ra, rb) in a.iter().zip(&b).skip(1) {
                assert_eq!(ra[j], rb[k], "{file}: {name} differs with the split");
            }
        }
        // The split cells have finite parts, the others NaN.
        let share = a[0].iter().position(|n| n == "self_signal_share").expect("self_signal_share");
        let id = a[0].iter().position(|n| n == "id").expect("id");
        for row in a.iter().skip(1) {
            let split = row[id] == "0" || row[id] == "3";
            assert_eq!(row[share].parse::<f64>().expect("number").is_finite(), split, "{file}: {row:?}");
        }
    }
}
