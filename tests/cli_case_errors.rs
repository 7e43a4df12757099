//! Drives the real `plumefield` binary on bad case files in a temporary folder: each must exit with code 2 and
//! print one `error:` line naming the key and its line; `layout` on a good case exits 0 and writes the CSV.

use std::path::{Path, PathBuf};
use std::process::Command;

const GOOD: &str = r#"title = "cli test"

[chamber]
size = ["96 um", "48 um", "40 um"]

[grid]
spacing = "2 um"

[medium]
model = "darcy"
viscosity = "1e-3 Pa s"
permeability = "1e-13 m^2"

[flow]
mean_velocity = "2 um/s"

[boundaries]
x_min = "inlet"
x_max = "outlet"

[ligand]
diffusivity = "1e-10 m^2/s"

[cells]
radius = "8 um"
secretion_rate = "2000 /h"
layout = { kind = "lattice", spacing = ["24 um", "24 um", "24 um"] }
"#;

struct Outcome {
    code: Option<i32>,
    stdout: String,
    stderr: String,
}

fn plumefield(args: &[&str], cwd: &Path) -> Outcome {
    let output = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(args)
        .current_dir(cwd)
        .output()
        .expect("the plumefield binary starts");
    Outcome {
        code: output.status.code(),
        stdout: String::from_utf8_lossy(&output.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&output.stderr).into_owned(),
    }
}

fn write_case(dir: &Path, name: &str, text: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, text).expect("write case file");
    path
}

fn line_of(text: &str, needle: &str) -> usize {
    text.lines()
        .position(|l| l.contains(needle))
        .map(|i| i + 1)
        .unwrap_or_else(|| panic!("{needle:?} not in case"))
}

/// A bad edit of the good case: `layout` must exit 2 with one line naming `key` at the line of `at`.
struct BadCase {
    name: &'static str,
    from: &'static str,
    to: &'static str,
    key: &'static str,
    at: &'static str,
    says: &'static str,
}

#[test]
fn bad_case_files_exit_2_naming_key_and_line() {
    let cases = [
        BadCase {
            name: "wrong_dimension",
            from: "radius = \"8 um\"",
            to: "radius = \"8 s\"",
            key: "cells.radius",
            at: "radius = \"8 s\"",
            says: "is a time, expected a length",
        },
        BadCase {
            name: "unknown_unit",
            from: "mean_velocity = \"2 um/s\"",
            to: "mean_velocity = \"2 leagues/s\"",
            key: "flow.mean_velocity",
            at: "mean_velocity",
            says: "unknown unit \"leagues\"",
        },
        BadCase {
            name: "unknown_key",
            from: "diffusivity = \"1e-10 m^2/s\"",
            to: "diffusivity = \"1e-10 m^2/s\"\ndifusivity = 3",
            key: "ligand.difusivity",
            at: "difusivity = 3",
            says: "is not a known key",
        },
        BadCase {
            name: "unknown_flow_model",
            from: "model = \"darcy\"",
            to: "model = \"oseen\"",
            key: "medium.model",
            at: "model = \"oseen\"",
            says: "is not a flow model",
        },
        BadCase {
            name: "grid_does_not_fit",
            from: "spacing = \"2 um\"",
            to: "spacing = \"2.1 um\"",
            key: "grid.spacing",
            at: "spacing = \"2.1 um\"",
            says: "nearest spacing that fits all three axes is 2 um",
        },
        BadCase {
            name: "inlet_on_y",
            from: "x_max = \"outlet\"",
            to: "x_max = \"outlet\"\ny_min = \"inlet\"",
            key: "boundaries.y_min",
            at: "y_min = \"inlet\"",
            says: "x is the mean-flow direction",
        },
        BadCase {
            name: "transient",
            from: "[cells]",
            to: "[solve]\nmode = \"transient\"\n\n[cells]",
            key: "solve.end_time",
            at: "[solve]",
            says: "solve.end_time is missing",
        },
        BadCase {
            name: "too_many_cells",
            from: "layout = { kind = \"lattice\", spacing = [\"24 um\", \"24 um\", \"24 um\"] }",
            to: "layout = { kind = \"random\", count = 300, seed = 4 }",
            key: "cells.layout.count",
            at: "kind = \"random\"",
            says: "beyond random close packing",
        },
        BadCase {
            name: "overlap",
            from: "layout = { kind = \"lattice\", spacing = [\"24 um\", \"24 um\", \"24 um\"] }",
            to: "list = [{ x = \"20 um\", y = \"20 um\", z = \"20 um\" }, { x = \"30 um\", y = \"20 um\", z = \"20 um\" }]",
            key: "cells.list",
            at: "list = ",
            says: "overlap",
        },
    ];
    let dir = tempfile::tempdir().expect("temp dir");
    let mut failures = Vec::new();
    for case in &cases {
        assert_eq!(GOOD.matches(case.from).count(), 1, "test bug in {}", case.name);
        let text = GOOD.replacen(case.from, case.to, 1);
        let file = format!("{}.toml", case.name);
        write_case(dir.path(), &file, &text);
        let out = plumefield(&["layout", &file, "-o", "cells.csv"], dir.path());
        let line = line_of(&text, case.at);
        let expected_start = format!("error: {file} line {line}: ");
        let stderr = out.stderr.trim_end();
        let ok = out.code == Some(2)
            && stderr.starts_with(&expected_start)
            && stderr.contains(case.key)
            && stderr.contains(case.says)
            && stderr.lines().count() == 1
            && !stderr.contains("panicked");
        if !ok {
            failures.push(format!(
                "{}:\n  expected: exit 2, one line starting {expected_start:?} naming {:?} and saying {:?}\n  actual:   exit {:?}, stderr {stderr:?}",
                case.name, case.key, case.says, out.code
            ));
        }
    }
    assert!(!dir.path().join("cells.csv").exists(), "no CSV may be written for a bad case");
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn layout_on_a_good_case_writes_the_csv() {
    let dir = tempfile::tempdir().expect("temp dir");
    write_case(dir.path(), "good.toml", GOOD);
    let out = plumefield(&["layout", "good.toml", "-o", "layout/cells.csv"], dir.path());
    assert_eq!(out.code, Some(0), "expected exit 0; stderr: {}", out.stderr);
    for expected in
        ["cells:           8", "volume fraction:", "per mL", "nearest-neighbour centre distance (um)"]
    {
        assert!(out.stdout.contains(expected), "expected {expected:?} in stdout:\n{}", out.stdout);
    }
    let csv_path = dir.path().join("layout/cells.csv");
    let text = std::fs::read_to_string(&csv_path).expect("CSV written");
    let mut lines = text.lines();
    assert_eq!(lines.next(), Some("id,x,y,z,radius,secretion_rate"));
    let rows: Vec<Vec<f64>> =
        lines.map(|l| l.split(',').map(|v| v.parse::<f64>().expect("number")).collect()).collect();
    assert_eq!(rows.len(), 8, "{text}");
    // Lattice: first centre half a lattice spacing (12 um) from the lower corner; SI units.
    let expected_first = [0.0, 12e-6, 12e-6, 12e-6, 8e-6, 2000.0 / 3600.0];
    for (actual, expected) in rows[0].iter().zip(expected_first) {
        assert!(
            (actual - expected).abs() <= 1e-12 * expected.abs().max(1e-30),
            "row 0: {:?} vs {expected_first:?}",
            rows[0]
        );
    }
    // Nothing temporary left beside it.
    let leftovers: Vec<_> = std::fs::read_dir(dir.path().join("layout"))
        .expect("folder")
        .filter_map(Result::ok)
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n != "cells.csv")
        .collect();
    assert!(leftovers.is_empty(), "left behind: {leftovers:?}");
}

#[test]
fn missing_file_and_later_commands_exit_2() {
    let dir = tempfile::tempdir().expect("temp dir");
    let out = plumefield(&["run", "absent.toml"], dir.path());
    assert_eq!(out.code, Some(2), "stderr: {}", out.stderr);
    assert!(out.stderr.starts_with("error: cannot read case file absent.toml"), "{}", out.stderr);
    for (args, says) in [
        (vec!["estimate", "absent.toml"], "cannot read case file absent.toml: No such file or directory (os error 2)"),
        (vec!["sweep", "sweep.toml", "--plan"], "cannot read sweep file sweep.toml: No such file or directory (os error 2)"),
        (vec!["collect", "somewhere"], "somewhere is not a sweep folder: cannot read sweep_plan.json: No such file or directory (os error 2)"),
    ] {
        let out = plumefield(&args, dir.path());
        assert_eq!(out.code, Some(2), "{args:?}: stderr {}", out.stderr);
        assert_eq!(out.stderr.trim_end(), format!("error: {says}"), "{args:?}");
    }
    let out = plumefield(&["no-such-command"], dir.path());
    assert_eq!(out.code, Some(2), "clap usage error: {}", out.stderr);
}

#[test]
fn example_cases_load() {
    let cases = Path::new(env!("CARGO_MANIFEST_DIR")).join("cases");
    let dir = tempfile::tempdir().expect("temp dir");
    for name in ["isolated.toml", "lattice.toml", "from_file.toml"] {
        let case = cases.join(name);
        let case = case.to_string_lossy();
        let out = plumefield(&["layout", &case, "-o", "cells.csv"], dir.path());
        assert_eq!(out.code, Some(0), "{name}: stderr {}", out.stderr);
    }
}
