//! The output files read by programs that share no code with our writers: h5py for `fields.h5`, Python's
//! csv module for `cells.csv`, VTK's XDMF reader (as used by ParaView) for `fields.xmf`. A synthetic output
//! set is written through the library API and checked by `tests/python/check_outputs.py`, which the run
//! tests also point at real run directories.

mod common;

use common::python;
use std::path::Path;

use plumefield::io::{
    write_cells_csv, write_fields_h5, write_fields_xmf, write_summary_json, CellTable, Column, FieldData,
    FieldStorage, Precision, Provenance,
};
use plumefield::outputs::columns::{CellColumn, CELL_COLUMNS};

/// Seeded values with awkward decimals, uniform in [0, 1).
fn seeded(seed: u64) -> numkit::Xoshiro256StarStar {
    numkit::Xoshiro256StarStar::seed_from_u64(seed)
}

/// Writes fields.h5, fields.xmf, cells.csv and summary.json of a small synthetic run into `dir`.
fn write_synthetic_run(dir: &Path) -> anyhow::Result<()> {
    write_synthetic_run_as(dir, FieldStorage::default())
}

/// [`write_synthetic_run`] with the 3-D fields stored as `storage` says.
fn write_synthetic_run_as(dir: &Path, storage: FieldStorage) -> anyhow::Result<()> {
    let grid = mesh::Grid::new([-1.0e-5, 2.0e-6, 3.3e-6], 2.0e-6, [7, 5, 4]);
    let mut rng = seeded(7);
    let mut field = |group: &str, name: &str, unit: &str, scale: f64| FieldData {
        group: group.into(),
        name: name.into(),
        unit: unit.into(),
        description: format!("synthetic {name}"),
        values: (0..grid.len()).map(|_| scale * (rng.next_f64() - 0.25)).collect::<Vec<f64>>().into(),
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
    let mut rng = seeded(11);
    // The registry's columns, so the readers see the names and units a run writes.
    let columns = CELL_COLUMNS
        .iter()
        .enumerate()
        .map(|(index, &CellColumn { name, unit, .. })| {
            if name == "id" {
                Column::int(name, unit, "cell identifier", (0..n_cells as u64).collect())
            } else {
                // Magnitudes from 1e3 down to 1e-17, so both plain and scientific text forms occur.
                let scale = 10f64.powi(3 - 4 * (index as i32 % 6));
                let mut values: Vec<f64> = (0..n_cells).map(|_| scale * (rng.next_f64() - 0.3)).collect();
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
    write_fields_h5(&dir.join("fields.h5"), &grid, &volume_fraction, &fields, &cells, &provenance, storage)?;
    write_fields_xmf(&dir.join("fields.xmf"), "fields.h5", &grid, &fields, storage.precision)?;
    write_cells_csv(&dir.join("cells.csv"), &cells)?;
    write_summary_json(
        &dir.join("summary.json"),
        &serde_json::json!({ "version": env!("CARGO_PKG_VERSION"), "cells": { "count": n_cells } }),
    )?;
    Ok(())
}

fn run_check(dir: &Path, require_vtk: bool) -> std::process::Output {
    let registry = python::write_column_registry(dir);
    let registry = registry.to_str().expect("temporary folders have UTF-8 names");
    let dir = dir.to_str().expect("temporary folders have UTF-8 names");
    let mut args = vec![dir, "--columns", registry];
    if require_vtk {
        args.push("--require-vtk");
    }
    python::run_script("check_outputs.py", &args)
}

#[test]
fn outside_readers_accept_the_outputs() {
    let Some(python::Readers { vtk }) = python::readers() else { return };
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
fn outside_readers_accept_single_precision_and_every_compression() {
    let Some(python::Readers { vtk }) = python::readers() else { return };
    for (precision, compression, label) in [
        (Precision::Single, 1, "32-bit, gzip"),
        (Precision::Single, 9, "32-bit, gzip"),
        (Precision::Double, 0, "64-bit, uncompressed"),
        (Precision::Single, 0, "32-bit, uncompressed"),
    ] {
        let dir = tempfile::tempdir().unwrap();
        write_synthetic_run_as(dir.path(), FieldStorage { precision, compression }).unwrap();
        let out = run_check(dir.path(), vtk);
        assert!(out.status.success(), "check_outputs.py failed for {precision:?} level {compression}");
        let stdout = String::from_utf8_lossy(&out.stdout);
        assert!(stdout.contains(label), "{precision:?} level {compression}: {stdout}");
        if vtk {
            assert!(stdout.contains("VTK vtkXdmfReader opens it"), "VTK part did not run");
        }
    }
}

#[test]
fn outside_check_catches_a_one_ulp_difference() {
    // The checker must be able to fail: change one value of cells.csv by one unit in the last place.
    let Some(_) = python::readers() else { return };
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

#[test]
fn outside_check_holds_the_files_to_the_registry() {
    // The registry check must be able to fail: a registry whose bound_rate has another unit than the files.
    let Some(_) = python::readers() else { return };
    let dir = tempfile::tempdir().unwrap();
    write_synthetic_run(dir.path()).unwrap();
    let registry = python::write_column_registry(dir.path());
    let text = std::fs::read_to_string(&registry).unwrap();
    let changed =
        text.replace(r#""name":"bound_rate","unit":"molecules/s""#, r#""name":"bound_rate","unit":"1/s""#);
    assert_ne!(changed, text, "the registry lists bound_rate in molecules/s");
    std::fs::write(&registry, changed).unwrap();
    let args = [dir.path().to_str().unwrap(), "--columns", registry.to_str().unwrap()];
    let out = python::run_script("check_outputs.py", &args);
    assert_eq!(out.status.code(), Some(1), "a unit that differs from the registry went unnoticed");
    assert!(String::from_utf8_lossy(&out.stderr).contains("/cells/bound_rate has units"));
}
