//! Drives the real `plumefield layout` on random, dense, margin and cluster layouts and on layout files: what it
//! prints, the cells it writes, and the refusals (exit 2, one line naming the key) and warnings of bad set-ups.

mod common;

use std::path::Path;
use std::process::Command;

struct Outcome {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

fn layout(dir: &Path, case_text: &str) -> Outcome {
    std::fs::write(dir.join("case.toml"), case_text).expect("write case");
    let output = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["layout", "case.toml", "-o", "cells.csv"])
        .current_dir(dir)
        .output()
        .expect("the plumefield binary starts");
    Outcome {
        code: output.status.code(),
        stdout: String::from_utf8_lossy(&output.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&output.stderr).into_owned(),
    }
}

/// Centres (m) of the written `cells.csv`.
fn centres(dir: &Path) -> Vec<[f64; 3]> {
    let mut reader = csv::Reader::from_path(dir.join("cells.csv")).expect("cells.csv");
    reader
        .records()
        .map(|r| {
            let r = r.expect("row");
            [1, 2, 3].map(|n| r[n].parse::<f64>().expect("number"))
        })
        .collect()
}

/// The small chamber with 5 um cells on a 1 um grid, periodic across y and z.
fn dense_chamber(layout: &str) -> String {
    common::small_chamber(&[
        ("chamber.size", r#"["100 um", "60 um", "60 um"]"#),
        ("grid.spacing", r#""1 um""#),
        ("cells.radius", r#""5 um""#),
        ("boundaries.y_min", r#""periodic""#),
        ("boundaries.y_max", r#""periodic""#),
        ("boundaries.z_min", r#""periodic""#),
        ("boundaries.z_max", r#""periodic""#),
        ("cells.layout", layout),
    ])
}

#[test]
fn dense_random_layout_reports_its_method_fraction_and_gaps() {
    let dir = tempfile::tempdir().unwrap();
    let out = layout(
        dir.path(),
        &dense_chamber(r#"{ kind = "random", volume_fraction = 0.5, min_gap = "0.2 um", seed = 2 }"#),
    );
    assert_eq!(out.code, Some(0), "{}", out.stderr);
    assert!(
        out.stdout.contains("layout:          random (dense packing by growth with collision relaxation)"),
        "{}",
        out.stdout
    );
    assert!(out.stdout.contains("volume fraction: 0.50"), "{}", out.stdout);
    assert!(out.stdout.contains("nearest surface gap (um): min 0.2"), "{}", out.stdout);
    // Gaps of 0.2 um on a 1 um grid: the warning says what that does.
    assert!(out.stdout.contains("surface gaps below the grid spacing of 1.00 um"), "{}", out.stdout);
    assert_eq!(centres(dir.path()).len(), 344);
}

#[test]
fn impossible_counts_are_refused_naming_the_key() {
    let dir = tempfile::tempdir().unwrap();
    let out = layout(dir.path(), &dense_chamber(r#"{ kind = "random", count = 1000000000 }"#));
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(out.stderr.contains("cells.layout.count"), "{}", out.stderr);
    assert!(out.stderr.contains("beyond random close packing (0.64)"), "{}", out.stderr);
    assert_eq!(out.stderr.lines().count(), 1, "{}", out.stderr);
    assert!(!dir.path().join("cells.csv").exists());
    let out = layout(dir.path(), &dense_chamber(r#"{ kind = "random", volume_fraction = 0.7 }"#));
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(out.stderr.contains("cells.layout.volume_fraction"), "{}", out.stderr);
}

#[test]
fn margins_keep_cells_away_from_the_inlet_and_outlet() {
    let dir = tempfile::tempdir().unwrap();
    let text = dense_chamber(
        r#"{ kind = "random", count = 40, min_gap = "1 um", seed = 5, inlet_margin = "20 um", outlet_margin = "10 um" }"#,
    );
    let out = layout(dir.path(), &text);
    assert_eq!(out.code, Some(0), "{}", out.stderr);
    let cells = centres(dir.path());
    assert_eq!(cells.len(), 40);
    for c in cells {
        assert!(c[0] - 5e-6 >= 20e-6 * (1.0 - 1e-12) && c[0] + 5e-6 <= 90e-6 * (1.0 + 1e-12), "{c:?}");
    }
    // A margin needs the face it names.
    let text = text
        .replace("x_min = \"inlet\"", "x_min = \"wall\"")
        .replace("x_max = \"outlet\"", "x_max = \"wall\"");
    let text = text.replace("mean_velocity = \"2 um/s\"", "mean_velocity = 0");
    let out = layout(dir.path(), &text);
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(
        out.stderr.contains("cells.layout.inlet_margin") && out.stderr.contains("not an inlet"),
        "{}",
        out.stderr
    );
}

#[test]
fn clusters_hold_their_cells_and_must_fit() {
    let dir = tempfile::tempdir().unwrap();
    let cluster = r#"{ kind = "cluster", centre = ["50 um", "30 um", "30 um"], semi_axes = ["30 um", "20 um", "20 um"], volume_fraction = 0.4, min_gap = "0.5 um", seed = 1 }"#;
    let out = layout(dir.path(), &dense_chamber(cluster));
    assert_eq!(out.code, Some(0), "{}", out.stderr);
    let cells = centres(dir.path());
    // 0.4 · (30 · 20 · 20) / 5³ um³ = 38.4.
    assert_eq!(cells.len(), 38);
    for c in cells {
        let r = ((c[0] - 50e-6) / 30e-6).powi(2)
            + ((c[1] - 30e-6) / 20e-6).powi(2)
            + ((c[2] - 30e-6) / 20e-6).powi(2);
        assert!(r <= 1.0, "{c:?}");
    }
    let too_big = cluster.replace(r#""30 um", "20 um", "20 um""#, r#""48 um", "20 um", "20 um""#);
    let out = layout(dir.path(), &dense_chamber(&too_big));
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(out.stderr.contains("cells.layout") && out.stderr.contains("does not fit"), "{}", out.stderr);
    // The cluster with its cells spans x = 15 … 85 um: a 15 um inlet margin is clear, a 16 um one is not.
    let clear = cluster.replace("seed = 1", "seed = 1, inlet_margin = \"15 um\"");
    let out = layout(dir.path(), &dense_chamber(&clear));
    assert_eq!(out.code, Some(0), "{}", out.stderr);
    let into = cluster.replace("seed = 1", "seed = 1, outlet_margin = \"16 um\"");
    let out = layout(dir.path(), &dense_chamber(&into));
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(
        out.stderr.contains("cells.layout.outlet_margin") && out.stderr.contains("inside the outlet margin"),
        "{}",
        out.stderr
    );
    assert_eq!(out.stderr.lines().count(), 1, "{}", out.stderr);
}

#[test]
fn margins_drop_lattice_cells_and_refuse_file_cells() {
    let dir = tempfile::tempdir().unwrap();
    // Centres at x = 10, 30, 50, 70, 90 um (radius 5 um): a 6 um inlet margin drops the first plane.
    let lattice = r#"{ kind = "lattice", spacing = ["20 um", "20 um", "20 um"], inlet_margin = "6 um" }"#;
    let out = layout(dir.path(), &dense_chamber(lattice));
    assert_eq!(out.code, Some(0), "{}", out.stderr);
    let cells = centres(dir.path());
    assert_eq!(cells.len(), 4 * 3 * 3);
    assert!(cells.iter().all(|c| c[0] > 20e-6), "{cells:?}");
    let none_left = lattice.replace("6 um", "95 um");
    let out = layout(dir.path(), &dense_chamber(&none_left));
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(out.stderr.contains("cells.layout.inlet_margin"), "{}", out.stderr);

    std::fs::write(dir.path().join("cells_in.csv"), "x,y,z\n50e-6,30e-6,30e-6\n92e-6,30e-6,30e-6\n").unwrap();
    let file = r#"{ kind = "file", path = "cells_in.csv", outlet_margin = "4 um" }"#;
    let out = layout(dir.path(), &dense_chamber(file));
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(
        out.stderr.contains("cells.layout.outlet_margin") && out.stderr.contains("(the first: cell 1)"),
        "{}",
        out.stderr
    );
    let out = layout(dir.path(), &dense_chamber(&file.replace("4 um", "3 um")));
    assert_eq!(out.code, Some(0), "{}", out.stderr);
}

#[test]
fn monte_carlo_sweeps_move_cells_and_stay_seeded() {
    let dir = tempfile::tempdir().unwrap();
    let base = r#"{ kind = "random", volume_fraction = 0.3, min_gap = "0.2 um", seed = 3 }"#;
    assert_eq!(layout(dir.path(), &dense_chamber(base)).code, Some(0));
    let placed = centres(dir.path());
    let relaxed_text = base.replace("seed = 3", "seed = 3, monte_carlo_sweeps = 50");
    assert_eq!(layout(dir.path(), &dense_chamber(&relaxed_text)).code, Some(0));
    let relaxed = centres(dir.path());
    assert_eq!(relaxed.len(), placed.len());
    assert!(relaxed.iter().zip(&placed).filter(|(p, q)| p != q).count() > placed.len() / 2);
    assert_eq!(layout(dir.path(), &dense_chamber(&relaxed_text)).code, Some(0));
    assert_eq!(centres(dir.path()), relaxed, "same seed, same cells");
    let out =
        layout(dir.path(), &dense_chamber(&base.replace("seed = 3", "seed = 3, monte_carlo_sweeps = 1e6")));
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(out.stderr.contains("cells.layout.monte_carlo_sweeps"), "{}", out.stderr);
}

#[test]
fn layout_files_warn_when_empty_and_refuse_non_files() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("empty.csv"), "x,y,z\n").unwrap();
    let out = layout(dir.path(), &dense_chamber(r#"{ kind = "file", path = "empty.csv" }"#));
    assert_eq!(out.code, Some(0), "{}", out.stderr);
    assert!(out.stdout.contains("warning:") && out.stdout.contains("holds no cells"), "{}", out.stdout);
    let out = layout(dir.path(), &dense_chamber(r#"{ kind = "file", path = "/dev/zero" }"#));
    assert_eq!(out.code, Some(2), "{}", out.stderr);
    assert!(
        out.stderr.contains("cells.layout.path") && out.stderr.contains("not a regular file"),
        "{}",
        out.stderr
    );
}
