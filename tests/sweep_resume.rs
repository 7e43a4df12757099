//! Interrupt a local sweep (SIGKILL, then Ctrl-C's SIGINT) and run it again: every case finished before the
//! interruption keeps intact outputs and is not run again, only the missing cases run, and the final
//! `sweep.csv` (one row per case, no duplicates) equals that of an uninterrupted run of the same sweep.

mod common;

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use common::sweep::*;

// Enough cases that the sweep cannot finish between the poll that sees `wait_for` done and the signal.
const CASES: usize = 16;

fn done_count(out_dir: &Path) -> usize {
    (0..CASES).filter(|i| out_dir.join(format!("cases/case-{i:04}/done.json")).exists()).count()
}

/// Start the sweep, wait until `wait_for` cases are done, then send `signal`; returns the finished cases.
fn interrupt(sweep: &Path, out_dir: &Path, signal: &str, wait_for: usize) -> Vec<usize> {
    let mut child = Command::new(binary())
        .args([
            "sweep",
            sweep.to_str().unwrap(),
            "-o",
            out_dir.to_str().unwrap(),
            "--jobs",
            "1",
            "--threads",
            "1",
        ])
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let started = Instant::now();
    while done_count(out_dir) < wait_for && started.elapsed() < Duration::from_secs(60) {
        std::thread::sleep(Duration::from_millis(5));
    }
    let status = Command::new("kill").args([signal, &child.id().to_string()]).status().unwrap();
    assert!(status.success());
    let exit = child.wait().unwrap();
    assert!(!exit.success(), "the sweep should have been interrupted, but it finished: {exit:?}");
    (0..CASES).filter(|i| out_dir.join(format!("cases/case-{i:04}/done.json")).exists()).collect()
}

#[test]
fn killed_and_interrupted_sweeps_resume_without_repeating_work() {
    let dir = tempfile::tempdir().unwrap();
    let sweep = write_sweep(
        dir.path(),
        "seeds = 2\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [0.5, 0.75, 1, 1.5, 2, 3, 4, 6]\nunit = \"um/s\"\n",
    );
    let out_dir = dir.path().join("resumed");

    let after_kill = interrupt(&sweep, &out_dir, "-KILL", 2);
    // Room for the second interruption: the cases take ~0.15 s each and the poll is every 5 ms.
    assert!(
        after_kill.len() >= 2 && after_kill.len() <= CASES - 3,
        "finished before SIGKILL: {after_kill:?}"
    );
    let markers: Vec<String> =
        after_kill.iter().map(|i| assert_case_intact(&out_dir.join(format!("cases/case-{i:04}")))).collect();
    assert!(!out_dir.join("sweep.csv").exists(), "no table from an interrupted run");

    let after_int = interrupt(&sweep, &out_dir, "-INT", after_kill.len() + 1);
    assert!(after_int.len() > after_kill.len(), "the second run finished no case: {after_int:?}");
    for i in &after_int {
        assert_case_intact(&out_dir.join(format!("cases/case-{i:04}")));
    }
    // Cases finished before the kill were not run again (their markers, with their wall times, are unchanged).
    for (i, marker) in after_kill.iter().zip(&markers) {
        let now = std::fs::read_to_string(out_dir.join(format!("cases/case-{i:04}/done.json"))).unwrap();
        assert_eq!(&now, marker, "case {i} was run again");
    }

    let out = pf(&["sweep", sweep.to_str().unwrap(), "-o", out_dir.to_str().unwrap(), "--jobs", "2"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let stderr = text(&out.stderr);
    let expected = format!("{} already done, {} to run", after_int.len(), CASES - after_int.len());
    assert!(stderr.contains(&expected), "expected {expected:?}:\n{stderr}");
    assert_eq!(stderr.matches(" done in ").count(), CASES - after_int.len(), "{stderr}");
    for i in 0..CASES {
        assert_case_intact(&out_dir.join(format!("cases/case-{i:04}")));
    }

    let fresh_dir = dir.path().join("fresh");
    let out = pf(&["sweep", sweep.to_str().unwrap(), "-o", fresh_dir.to_str().unwrap(), "--jobs", "2"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let resumed = std::fs::read_to_string(out_dir.join("sweep.csv")).unwrap();
    let fresh = std::fs::read_to_string(fresh_dir.join("sweep.csv")).unwrap();
    assert_eq!(resumed.lines().count(), CASES + 1);
    let ids = column(&out_dir.join("sweep.csv"), "case_id");
    let mut unique = ids.clone();
    unique.dedup();
    assert_eq!(unique.len(), CASES, "{ids:?}");
    assert_eq!(resumed, fresh, "the resumed sweep's table differs from an uninterrupted run's");
}

/// A local sweep writes its cases' outputs and done markers without `fsync`; the marker records the boot. A
/// power cut can leave a marker beside outputs of the right size but lost contents, or a marker whose own
/// contents were lost; the next boot's sweep must then check the outputs' SHA-256s and run the damaged cases
/// again, and only those.
#[cfg(target_os = "linux")]
#[test]
fn unsynced_outputs_damaged_by_a_crash_are_run_again_after_reboot() {
    let dir = tempfile::tempdir().unwrap();
    let sweep = write_sweep(
        dir.path(),
        "[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [1, 2, 4]\nunit = \"um/s\"\n",
    );
    let out_dir = dir.path().join("out");
    let args = ["sweep", sweep.to_str().unwrap(), "-o", out_dir.to_str().unwrap(), "--jobs", "2"];
    let out = pf(&args);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let table = std::fs::read_to_string(out_dir.join("sweep.csv")).unwrap();
    let this_boot = std::fs::read_to_string("/proc/sys/kernel/random/boot_id").unwrap().trim().to_string();
    let case_dir = |i: usize| out_dir.join(format!("cases/case-{i:04}"));
    let marker = |i: usize| -> serde_json::Value {
        serde_json::from_slice(&std::fs::read(case_dir(i).join("done.json")).unwrap()).unwrap()
    };
    for i in 0..3 {
        assert_case_intact(&case_dir(i));
        assert_eq!(marker(i)["unsynced_boot_id"], this_boot.as_str(), "case {i}");
    }
    // As after a power cut and reboot: markers written in an earlier boot; case 1's cells.csv and case 2's
    // done.json kept their sizes but lost their contents (zeros, as delayed allocation can leave); case 0
    // survived whole.
    for i in 0..2 {
        let mut m = marker(i);
        m["unsynced_boot_id"] = "an earlier boot".into();
        std::fs::write(case_dir(i).join("done.json"), serde_json::to_vec_pretty(&m).unwrap()).unwrap();
    }
    let cells = case_dir(1).join("cells.csv");
    let size = std::fs::metadata(&cells).unwrap().len() as usize;
    std::fs::write(&cells, vec![0u8; size]).unwrap();
    let done_2 = case_dir(2).join("done.json");
    let size = std::fs::metadata(&done_2).unwrap().len() as usize;
    std::fs::write(&done_2, vec![0u8; size]).unwrap();

    let out = pf(&args);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let stderr = text(&out.stderr);
    assert!(stderr.contains("1 already done, 2 to run"), "{stderr}");
    assert!(!stderr.contains("case-0000 done in"), "{stderr}");
    for i in 1..3 {
        assert!(stderr.contains(&format!("case-{i:04} done in")), "{stderr}");
        assert_case_intact(&case_dir(i));
        assert_eq!(marker(i)["unsynced_boot_id"], this_boot.as_str());
    }
    // Case 0 passed the SHA-256 check: its outputs are synced and its marker rewritten without a boot id,
    // so later runs check sizes only.
    assert_case_intact(&case_dir(0));
    assert!(marker(0).get("unsynced_boot_id").is_none(), "{}", marker(0));
    assert_eq!(std::fs::read_to_string(out_dir.join("sweep.csv")).unwrap(), table);
}

/// `--task` (what a Slurm array task runs) syncs every output as `run` does: its marker claims no boot.
#[test]
fn task_outputs_are_synced_file_by_file() {
    let dir = tempfile::tempdir().unwrap();
    let sweep =
        write_sweep(dir.path(), "[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [1, 2]\nunit = \"um/s\"\n");
    let out_dir = dir.path().join("out");
    let out = pf(&[
        "sweep",
        sweep.to_str().unwrap(),
        "-o",
        out_dir.to_str().unwrap(),
        "--task",
        "1",
        "--threads",
        "1",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let case_dir = out_dir.join("cases/case-0001");
    assert_case_intact(&case_dir);
    let marker: serde_json::Value =
        serde_json::from_slice(&std::fs::read(case_dir.join("done.json")).unwrap()).unwrap();
    assert!(marker.get("unsynced_boot_id").is_none(), "{marker}");
}
