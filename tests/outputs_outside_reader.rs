//! The output files read by programs that share no code with our writers: h5py for `fields.h5`, Python's
//! csv module for `cells.csv`, VTK's XDMF reader (as used by ParaView) for `fields.xmf`. A synthetic output
//! set is written through the library API and checked by `tests/python/check_outputs.py`, which the run
//! tests also point at real run directories.

use std::path::{Path, PathBuf};
use std::process::Command;

use plumefield::io::{
    write_cells_csv, write_fields_h5, write_fields_xmf, write_summary_json, CellTable, Column, FieldData,
    Provenance,
};

fn script() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests").join("python").join("check_outputs.py")
}

fn python_succeeds(args: &[&str]) -> bool {
    Command::new("python3").args(args).output().map(|o| o.status.success()).unwrap_or(false)
}

fn pip_install(packages: &[&str]) -> bool {
    let mut args = vec!["-m", "pip", "install", "--quiet"];
    args.extend_from_slice(packages);
    python_succeeds(&args)
}

/// Python with h5py and numpy, installing them if needed; `None` (test skipped) if they cannot be had.
/// The value says whether `vtk` is importable (tried to install once: it is a large wheel). Decided once
/// per test binary so that parallel tests do not run pip side by side.
fn python_readers() -> Option<bool> {
    static READERS: std::sync::OnceLock<Option<bool>> = std::sync::OnceLock::new();
    *READERS.get_or_init(find_python_readers)
}

fn find_python_readers() -> Option<bool> {
    if !python_succeeds(&["--version"]) {
        println!("SKIPPED outside-reader check: python3 is not available");
        return None;
    }
    if !python_succeeds(&["-c", "import h5py, numpy"]) {
        pip_install(&["h5py", "numpy"]);
        if !python_succeeds(&["-c", "import h5py, numpy"]) {
            println!("SKIPPED outside-reader check: h5py and numpy could not be installed with pip");
            return None;
        }
    }
    let vtk = python_succeeds(&["-c", "import vtkmodules.vtkIOXdmf2"])
        || (pip_install(&["vtk"]) && python_succeeds(&["-c", "import vtkmodules.vtkIOXdmf2"]));
    if !vtk {
        println!("note: the vtk wheel could not be installed; the XDMF part runs without VTK");
    }
    Some(vtk)
}

/// Seeded values with awkward decimals (64-bit linear congruential generator, Knuth's MMIX constants).
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

const CELL_COLUMNS: [(&str, &str); 18] = [
    ("id", "1"),
    ("x", "m"),
    ("y", "m"),
    ("z", "m"),
    ("radius", "m"),
    ("secretion_rate", "1/s"),
    ("mean_surface_concentration", "molecules/m^3"),
    ("bound_rate", "1/s"),
    ("anisotropy_x", "1"),
    ("anisotropy_y", "1"),
    ("anisotropy_z", "1"),
    ("anisotropy_along_flow", "1"),
    ("front_back_contrast", "1"),
    ("direction_error", "1"),
    ("drag_x", "N"),
    ("drag_y", "N"),
    ("drag_z", "N"),
    ("local_speed", "m/s"),
];

/// Writes fields.h5, fields.xmf, cells.csv and summary.json of a small synthetic run into `dir`.
fn write_synthetic_run(dir: &Path) -> anyhow::Result<()> {
    let grid = mesh::Grid::new([-1.0e-5, 2.0e-6, 3.3e-6], 2.0e-6, [7, 5, 4]);
    let mut rng = Lcg(7);
    let mut field = |group: &str, name: &str, unit: &str, scale: f64| FieldData {
        group: group.into(),
        name: name.into(),
        unit: unit.into(),
        description: format!("synthetic {name}"),
        values: (0..grid.len()).map(|_| scale * (rng.next() - 0.25)).collect(),
    };
    let fields = vec![
        field("flow", "u", "m/s", 2e-6),
        field("flow", "v", "m/s", 1e-7),
        field("flow", "w", "m/s", 1e-7),
        field("flow", "pressure", "Pa", 3.0),
        field("ligand", "concentration", "molecules/m^3", 1e16),
    ];
    let volume_fraction: Vec<f64> = (0..grid.len()).map(|n| if n % 5 == 0 { 0.37 } else { 1.0 }).collect();

    let n_cells = 6;
    let mut rng = Lcg(11);
    let columns = CELL_COLUMNS
        .iter()
        .enumerate()
        .map(|(index, &(name, unit))| {
            if name == "id" {
                Column::int(name, unit, "cell identifier", (0..n_cells as u64).collect())
            } else {
                // Magnitudes from 1e3 down to 1e-17, so both plain and scientific text forms occur.
                let scale = 10f64.powi(3 - 4 * (index as i32 % 6));
                let mut values: Vec<f64> = (0..n_cells).map(|_| scale * (rng.next() - 0.3)).collect();
                if name == "direction_error" {
                    values[2] = f64::INFINITY; // a cell that senses no front-back contrast
                }
                Column::real(name, unit, &format!("synthetic {name}"), values)
            }
        })
        .collect();
    let cells = CellTable { columns };

    let case_text = "title = \"synthetic\"\n[grid]\nspacing = \"2 um\"\n".to_string();
    let provenance = Provenance {
        version: env!("CARGO_PKG_VERSION").into(),
        git_revision: plumefield::io::git_revision(),
        case_sha256: plumefield::io::provenance::sha256_hex(case_text.as_bytes()),
        case_text,
        command_line: "plumefield run synthetic.toml".into(),
    };
    write_fields_h5(&dir.join("fields.h5"), &grid, &volume_fraction, &fields, &cells, &provenance)?;
    write_fields_xmf(&dir.join("fields.xmf"), "fields.h5", &grid, &fields)?;
    write_cells_csv(&dir.join("cells.csv"), &cells)?;
    write_summary_json(
        &dir.join("summary.json"),
        &serde_json::json!({ "version": env!("CARGO_PKG_VERSION"), "cells": { "count": n_cells } }),
    )?;
    Ok(())
}

fn run_check(dir: &Path, require_vtk: bool) -> std::process::Output {
    let mut cmd = Command::new("python3");
    // The Rust test process forks Python while parallel tests hold HDF5 files open; the child inherits those
    // descriptors and with them HDF5's flock, so a reader in another test could find its file locked.
    // Reading needs no lock.
    cmd.env("HDF5_USE_FILE_LOCKING", "FALSE");
    cmd.arg(script()).arg(dir);
    if require_vtk {
        cmd.arg("--require-vtk");
    }
    let out = cmd.output().expect("python3 ran a moment ago");
    println!("--- check_outputs.py {} ---", dir.display());
    println!("{}", String::from_utf8_lossy(&out.stdout));
    println!("{}", String::from_utf8_lossy(&out.stderr));
    out
}

#[test]
fn outside_readers_accept_the_outputs() {
    let Some(vtk) = python_readers() else { return };
    let dir = tempfile::tempdir().unwrap();
    write_synthetic_run(dir.path()).unwrap();
    let out = run_check(dir.path(), vtk);
    assert!(out.status.success(), "check_outputs.py failed (exit {:?})", out.status.code());
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(stdout.contains("all output checks passed"));
    if vtk {
        assert!(stdout.contains("VTK vtkXdmfReader opens it"), "VTK part did not run");
    }
}

#[test]
fn outside_check_catches_a_one_ulp_difference() {
    // The checker must be able to fail: change one value of cells.csv by one unit in the last place.
    let Some(_) = python_readers() else { return };
    let dir = tempfile::tempdir().unwrap();
    write_synthetic_run(dir.path()).unwrap();
    let csv_path = dir.path().join("cells.csv");
    let text = std::fs::read_to_string(&csv_path).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let mut fields: Vec<String> = lines[1].split(',').map(str::to_string).collect();
    let x: f64 = fields[1].parse().unwrap();
    fields[1] = format!("{:e}", f64::from_bits(x.to_bits() + 1));
    lines[1] = fields.join(",");
    std::fs::write(&csv_path, lines.join("\n") + "\n").unwrap();
    let out = run_check(dir.path(), false);
    assert_eq!(out.status.code(), Some(1), "a one-ulp change went unnoticed");
    assert!(String::from_utf8_lossy(&out.stderr).contains("cells.csv x row 0"));
}
