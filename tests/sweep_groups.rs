//! `collect`'s sensing columns in `sweep.csv` and the replicate groups of `sweep_groups.csv`, checked against
//! the cases' own `summary.json` files and a by-hand mean, standard deviation and Student-t interval.

mod common;

use common::sweep::*;

fn real(text: &str) -> f64 {
    text.parse().unwrap_or_else(|_| panic!("{text:?} is not a number"))
}

#[test]
fn groups_average_the_seeds_of_each_parameter_value() {
    let dir = tempfile::tempdir().unwrap();
    let sweep = write_sweep(
        dir.path(),
        "output = \"out\"\nseeds = 3\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [\"0.5 um/s\", \"4 um/s\"]\n",
    );
    let out = pf(&["sweep", sweep.to_str().unwrap(), "--jobs", "2", "--threads", "2"]);
    assert!(out.status.success(), "{}", show(&out));
    let folder = dir.path().join("out");
    let table = folder.join("sweep.csv");
    let ids = column(&table, "case_id");
    let failed = column(&table, "sensing.failed_fraction");
    assert_eq!(ids.len(), 6);
    // sweep.csv carries the summary's value for each case, and a slab column by index.
    for (id, f) in ids.iter().zip(&failed) {
        let summary: serde_json::Value = serde_json::from_slice(
            &std::fs::read(folder.join("cases").join(id).join("summary.json")).unwrap(),
        )
        .unwrap();
        assert_eq!(summary["sensing"]["failed_fraction"].as_f64().unwrap(), real(f), "{id}");
    }
    assert_eq!(column(&table, "sensing.by_position.7.cells").len(), 6);

    let groups = folder.join("sweep_groups.csv");
    let speeds = column(&groups, "flow.mean_velocity");
    assert_eq!(speeds.len(), 2, "two groups of three seeds");
    assert!(read_csv(&groups).0.iter().all(|h| h != "cells.layout.seed"), "the seed is not a group key");
    let errors = column(&table, "direction_error_median");
    for (g, stat) in [("mean", 0), ("sd", 1), ("count", 2), ("ci95_high", 3)] {
        let written = column(&groups, &format!("direction_error_median.{g}"));
        for (group, value) in written.iter().enumerate() {
            let v: Vec<f64> = errors[3 * group..3 * group + 3].iter().map(|t| real(t)).collect();
            let mean = v.iter().sum::<f64>() / 3.0;
            let sd = (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / 2.0).sqrt();
            // t₀.₉₇₅ with 2 degrees of freedom: 4.3027 (Abramowitz & Stegun 1964, Table 26.10).
            let want = [mean, sd, 3.0, mean + 4.3027 * sd / 3f64.sqrt()][stat];
            assert!(
                (real(value) - want).abs() <= 1e-12 * want.abs(),
                "{g} of group {group}: {value} vs {want}"
            );
        }
    }
}
