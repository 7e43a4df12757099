//! `run` writes the estimate beside each measured column, the measured/estimate ratios and the self/neighbour
//! split of the cells chosen by `[sensing] decompose`; `summary.json` aggregates them.

use std::path::Path;
use std::process::Command;

mod common;

/// A small Darcy channel with a few cells (seconds to solve).
/// `decompose`: the value of `[sensing] decompose` as TOML text.
fn case_text(decompose: &str) -> String {
    common::small_chamber(&[
        ("chamber.size", r#"["120 um", "48 um", "48 um"]"#),
        ("flow.mean_velocity", r#""1 um/s""#),
        ("sensing.decompose", decompose),
    ])
}

fn run(dir: &Path, text: &str) -> std::process::Output {
    let case = dir.join("case.toml");
    std::fs::write(&case, text).unwrap();
    Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["run", case.to_str().unwrap(), "-o", dir.join("out").to_str().unwrap()])
        .output()
        .expect("runs")
}

fn column(rows: &[csv::StringRecord], header: &csv::StringRecord, name: &str) -> Vec<f64> {
    let i = header.iter().position(|h| h == name).unwrap_or_else(|| panic!("no column {name}"));
    rows.iter().map(|r| r[i].parse::<f64>().unwrap()).collect()
}

#[test]
fn estimate_and_split_columns_follow_the_contract_columns() {
    let dir = tempfile::tempdir().unwrap();
    let out = run(dir.path(), &case_text("[0, 2]"));
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let mut reader = csv::Reader::from_path(dir.path().join("out/cells.csv")).unwrap();
    let header = reader.headers().unwrap().clone();
    let rows: Vec<csv::StringRecord> = reader.records().map(|r| r.unwrap()).collect();
    // The contract columns come first, in their order; the estimates after them.
    let names: Vec<&str> = header.iter().collect();
    assert_eq!(names[..3], ["id", "x", "y"]);
    let local_speed = names.iter().position(|&n| n == "local_speed").unwrap();
    let first_estimate = names.iter().position(|&n| n == "estimate_background").unwrap();
    assert!(first_estimate > local_speed);

    let measured = column(&rows, &header, "anisotropy_along_flow");
    let estimate = column(&rows, &header, "estimate_anisotropy_along_flow");
    let ratio = column(&rows, &header, "anisotropy_along_flow_over_estimate");
    for i in 0..rows.len() {
        assert!((ratio[i] - measured[i] / estimate[i]).abs() <= 1e-12 * ratio[i].abs());
    }
    let surface = column(&rows, &header, "mean_surface_concentration_over_estimate");
    // Six dilute cells: the estimate of the surface concentration holds to tens of per cent.
    assert!(surface.iter().all(|r| (0.7..1.4).contains(r)), "{surface:?}");

    // Split of cells 0 and 2 only; self + neighbour = total bound rate and anisotropy vector; the share in [0, 1].
    let share = column(&rows, &header, "self_signal_share");
    let vector = |prefix: &str| ["x", "y", "z"].map(|a| column(&rows, &header, &format!("{prefix}_{a}")));
    let (from_self, from_neighbours) = (vector("anisotropy_from_self"), vector("anisotropy_from_neighbours"));
    let total = vector("anisotropy");
    let along = column(&rows, &header, "anisotropy_along_flow");
    let along_parts =
        ["self", "neighbours"].map(|p| column(&rows, &header, &format!("anisotropy_from_{p}_along_flow")));
    let own = column(&rows, &header, "self_bound_rate");
    let others = column(&rows, &header, "neighbour_bound_rate");
    let bound = column(&rows, &header, "bound_rate");
    for i in 0..rows.len() {
        if i == 0 || i == 2 {
            assert!((0.0..=1.0).contains(&share[i]) && own[i] > 0.0, "{}", share[i]);
            assert!((own[i] + others[i] - bound[i]).abs() < 1e-9 * bound[i]);
            let scale = (0..3).map(|a| total[a][i].abs()).fold(0.0, f64::max);
            for a in 0..3 {
                let sum = from_self[a][i] + from_neighbours[a][i];
                assert!((sum - total[a][i]).abs() <= 1e-12 * scale, "axis {a}: {sum} vs {}", total[a][i]);
            }
            assert!((along_parts[0][i] + along_parts[1][i] - along[i]).abs() <= 1e-12 * scale);
        } else {
            assert!(share[i].is_nan() && own[i].is_nan() && from_self[0][i].is_nan());
        }
    }
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("out/summary.json")).unwrap()).unwrap();
    let per_cell = &summary["estimates"]["per_cell"];
    assert_eq!(per_cell["self_signal_share"]["count"], 2);
    assert!(per_cell.get("anisotropy_from_self_x").is_none(), "vector components are not summarised");
    assert!(per_cell["anisotropy_along_flow_over_estimate"]["median"].as_f64().unwrap().is_finite());
    assert_eq!(summary["estimates"]["self_neighbour"]["cells"], 2);
}

#[test]
fn bad_decompose_values_are_input_errors_naming_the_key() {
    let dir = tempfile::tempdir().unwrap();
    for (value, needle) in [
        ("\"some\"", "sensing.decompose"),
        ("\"sample:0\"", "sensing.decompose"),
        ("[1, -2]", "sensing.decompose[1]"),
        ("[0, 99]", "sensing.decompose[1] = 99 is not a cell of the layout"),
    ] {
        let out = run(dir.path(), &case_text(value));
        assert_eq!(out.status.code(), Some(2), "{value}");
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(stderr.contains(needle), "{value}: {stderr}");
        assert!(!dir.path().join("out").exists(), "{value}: nothing is written");
    }
}

/// An id beyond the layout is an error of the case, found before anything is solved: `estimate`, which solves
/// nothing, refuses it too.
#[test]
fn decompose_ids_are_checked_with_the_case() {
    let dir = tempfile::tempdir().unwrap();
    let case = dir.path().join("case.toml");
    std::fs::write(&case, case_text("[3, 6]")).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["estimate", case.to_str().unwrap()])
        .output()
        .expect("runs");
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("sensing.decompose[1] = 6 is not a cell of the layout"), "{stderr}");
}
