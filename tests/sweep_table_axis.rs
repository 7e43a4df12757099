//! A sweep axis whose values are whole uptake tables, and the cases' warnings in `--plan`, the sweep's log
//! and `sweep.csv`.

mod common;

use common::sweep::*;
use std::path::Path;

const UPTAKE_AXIS: &str =
    "seeds = 2\n[[axis]]\nkey = \"cells.uptake\"\nvalues = [\n  { model = \"none\" },\n  \
     { model = \"first_order\", rate_constant = \"1e-6 m/s\" },\n  \
     { model = \"first_order\", rate_constant = \"1e-5 m/s\" },\n]\n";

/// Header and rows of a CSV file, read by a CSV reader (warnings may hold commas).
fn table(path: &Path) -> (csv::StringRecord, Vec<csv::StringRecord>) {
    let mut reader = csv::Reader::from_path(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let header = reader.headers().unwrap().clone();
    (header, reader.records().map(|r| r.unwrap()).collect())
}

fn values<'a>(t: &'a (csv::StringRecord, Vec<csv::StringRecord>), name: &str) -> Vec<&'a str> {
    let k = t.0.iter().position(|h| h == name).unwrap_or_else(|| panic!("no column {name} in {:?}", t.0));
    t.1.iter().map(|r| r.get(k).unwrap()).collect()
}

#[test]
fn uptake_tables_are_swept_whole_and_shown_by_model_and_rate() {
    let dir = tempfile::tempdir().unwrap();
    let path = write_sweep(dir.path(), UPTAKE_AXIS);

    // The base case's cells span 3.2 grid spacings: every case carries that warning, and --plan shows it.
    let out = pf(&["sweep", path.to_str().unwrap(), "--plan"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let stdout = text(&out.stdout);
    let planned = stdout.lines().filter(|l| l.contains("warning:") && l.contains("grid spacings")).count();
    assert_eq!(planned, 6, "{stdout}");

    let out_dir = dir.path().join("out");
    let out = pf(&["sweep", path.to_str().unwrap(), "-o", out_dir.to_str().unwrap(), "--jobs", "2"]);
    assert_eq!(out.status.code(), Some(0), "{}", show(&out));
    let logged =
        text(&out.stderr).lines().filter(|l| l.contains("warning:") && l.contains("grid spacings")).count();
    assert_eq!(logged, 6, "{}", show(&out));

    let sweep = table(&out_dir.join("sweep.csv"));
    assert_eq!(
        values(&sweep, "cells.uptake.model"),
        ["none", "none", "first_order", "first_order", "first_order", "first_order"]
    );
    assert_eq!(values(&sweep, "cells.uptake.rate_constant"), ["nan", "nan", "1e-6", "1e-6", "1e-5", "1e-5"]);
    for warnings in values(&sweep, "warnings") {
        assert!(warnings.contains("grid spacings"), "{warnings}");
    }
    let bound: Vec<f64> = values(&sweep, "bound_rate_median").iter().map(|v| v.parse().unwrap()).collect();
    assert!(bound[0] == 0.0 && bound[2] > 0.0 && bound[4] > bound[2], "{bound:?}");

    // Replicates are grouped per table, never across tables of one model with different rates.
    let groups = table(&out_dir.join("sweep_groups.csv"));
    assert_eq!(values(&groups, "cells.uptake.model"), ["none", "first_order", "first_order"]);
    assert_eq!(values(&groups, "cases"), ["2", "2", "2"]);
}
