//! The Brinkman resolution guard on the command line: when the screening length √(μ_e K/μ) spans fewer than
//! two grid spacings, `estimate` (table, stderr and `--json`) and `run` (before solving, and in summary.json)
//! report the expected drag error and the spacing that resolves it; a resolved case reports nothing.

use solver::flow::brinkman::resolution::DRAG_ERROR_MODEL;
use std::path::Path;
use std::process::{Command, Output};

/// A 48 µm cube at h = 2 µm (24³) with one cell of radius 8 µm in a Brinkman medium of permeability `k`.
fn brinkman_case(permeability: &str) -> String {
    format!(
        r#"title = "one cell in a Brinkman medium"
[chamber]
size = ["48 um", "48 um", "48 um"]
[grid]
spacing = "2 um"
[medium]
model = "brinkman"
viscosity = "1e-3 Pa s"
permeability = "{permeability}"
[flow]
mean_velocity = "1 um/s"
[boundaries]
x_min = "far_field"
x_max = "far_field"
y_min = "far_field"
y_max = "far_field"
z_min = "far_field"
z_max = "far_field"
[ligand]
diffusivity = "1e-10 m^2/s"
[cells]
radius = "8 um"
secretion_rate = "2000 /h"
list = [{{ x = "24 um", y = "24 um", z = "24 um" }}]
[output]
fields = ["concentration"]
figures = false
"#
    )
}

/// √K = 1 µm = h/2: under-resolved. Expected drag error from the guard's model at h/√K = 2; suggested h =
/// √K/2.
const UNDER_RESOLVED: &str = "1e-12 m^2";
/// √K = 4 µm = 2h: resolved.
const RESOLVED: &str = "1.6e-11 m^2";

fn plumefield(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_plumefield")).args(args).current_dir(dir).output().expect("runs")
}

fn write_case(dir: &Path, permeability: &str) {
    std::fs::write(dir.join("case.toml"), brinkman_case(permeability)).expect("write case");
}

fn expected_drag_error() -> f64 {
    let (coefficient, exponent) = DRAG_ERROR_MODEL;
    coefficient * 2f64.powf(exponent)
}

#[test]
fn estimate_reports_under_resolved_screening_length() {
    let dir = tempfile::tempdir().expect("temp dir");
    write_case(dir.path(), UNDER_RESOLVED);
    let out = plumefield(dir.path(), &["estimate", "case.toml"]);
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let stderr = String::from_utf8_lossy(&out.stderr);
    let stdout = String::from_utf8_lossy(&out.stdout);
    let percent = format!("{:.1}%", 100.0 * expected_drag_error());
    for needle in
        ["warning: the Brinkman screening length", "spans only 0.50 grid spacings", &percent, "5.000e-7 m"]
    {
        assert!(stderr.contains(needle), "missing {needle:?} in stderr:\n{stderr}");
    }
    for needle in ["UNDER-RESOLVED", "0.50 spacings", &percent, "suggested spacing 5.000e-7 m"] {
        assert!(stdout.contains(needle), "missing {needle:?} in table:\n{stdout}");
    }

    let out = plumefield(dir.path(), &["estimate", "case.toml", "--json"]);
    assert!(out.status.success());
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).expect("valid JSON");
    let guard = &json["flow_resolution"];
    let value = |key: &str| guard[key].as_f64().unwrap_or_else(|| panic!("{key} in {guard}"));
    assert!((value("screening_length") - 1e-6).abs() < 1e-15);
    assert!((value("spacing") - 2e-6).abs() < 1e-15);
    assert!((value("suggested_spacing") - 5e-7).abs() < 1e-15);
    assert!((value("expected_drag_error") / expected_drag_error() - 1.0).abs() < 1e-12);
}

#[test]
fn estimate_is_silent_when_resolved() {
    let dir = tempfile::tempdir().expect("temp dir");
    write_case(dir.path(), RESOLVED);
    let out = plumefield(dir.path(), &["estimate", "case.toml"]);
    assert!(out.status.success());
    assert!(!String::from_utf8_lossy(&out.stderr).contains("screening length"));
    assert!(!String::from_utf8_lossy(&out.stdout).contains("UNDER-RESOLVED"));
    let out = plumefield(dir.path(), &["estimate", "case.toml", "--json"]);
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).expect("valid JSON");
    assert!(json["flow_resolution"].is_null(), "{}", json["flow_resolution"]);
}

#[test]
fn run_warns_before_solving_and_records_the_guard() {
    let dir = tempfile::tempdir().expect("temp dir");
    write_case(dir.path(), UNDER_RESOLVED);
    let out = plumefield(dir.path(), &["run", "case.toml", "-o", "out"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "{stderr}");
    // Told once, before the solve starts (summary.json keeps it with the solution's warnings).
    let warning = "warning: the Brinkman screening length";
    assert_eq!(stderr.matches(warning).count(), 1, "{stderr}");
    let before_done = stderr.find(warning).expect("warned");
    assert!(before_done < stderr.find("done in").expect("finished"), "{stderr}");

    let text = std::fs::read_to_string(dir.path().join("out/summary.json")).expect("summary.json");
    let summary: serde_json::Value = serde_json::from_str(&text).expect("valid JSON");
    let flow = &summary["flow"];
    assert_eq!(flow["model"], "brinkman");
    assert_eq!(flow["screening_length_resolved"], false);
    let error = flow["expected_drag_error"].as_f64().expect("expected_drag_error");
    assert!((error / expected_drag_error() - 1.0).abs() < 1e-12, "{error}");
    assert!((flow["suggested_spacing"].as_f64().expect("suggested_spacing") - 5e-7).abs() < 1e-15);
    let warnings = summary["warnings"].as_array().expect("warnings");
    assert!(
        warnings.iter().any(|w| w.as_str().is_some_and(|w| w.contains("screening length"))),
        "{warnings:?}"
    );
}

#[test]
fn run_of_a_resolved_case_records_no_guard() {
    let dir = tempfile::tempdir().expect("temp dir");
    write_case(dir.path(), RESOLVED);
    let out = plumefield(dir.path(), &["run", "case.toml", "-o", "out"]);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.success(), "{stderr}");
    assert!(!stderr.contains("screening length"), "{stderr}");
    // The divergence check of every run is silent for a converged flow.
    assert!(!stderr.contains("divergence"), "{stderr}");
    let text = std::fs::read_to_string(dir.path().join("out/summary.json")).expect("summary.json");
    let summary: serde_json::Value = serde_json::from_str(&text).expect("valid JSON");
    assert_eq!(summary["flow"]["screening_length_resolved"], true);
    assert!(summary["flow"]["expected_drag_error"].is_null());
}
