//! `plumefield run` end to end on small invented chambers: exit codes, the cells.csv contract, the mass
//! balance in summary.json, outside readers on a real output folder, and nothing written when a solve fails.

use std::path::PathBuf;
use std::process::{Command, Output};

mod common;

const CONTRACT_COLUMNS: &str = "id,x,y,z,radius,secretion_rate,mean_surface_concentration,bound_rate,anisotropy_x,anisotropy_y,anisotropy_z,anisotropy_along_flow,front_back_contrast,direction_error,drag_x,drag_y,drag_z,local_speed";

/// The small chamber with bulk decay, ligand coming in at the inlet and all fields written; `changes` on top.
fn small_chamber(changes: &[(&str, &str)]) -> String {
    let mut all = vec![
        ("ligand.decay_rate", r#""1e-3 /s""#),
        ("ligand.inlet_concentration", r#""1 pM""#),
        ("solve.mode", r#""steady""#),
        ("output.fields", r#"["concentration", "velocity", "pressure"]"#),
    ];
    all.extend_from_slice(changes);
    common::small_chamber(&all)
}

/// Inlet and outlet along x, walls in y, periodic in z.
const INLET_OUTLET: [(&str, &str); 2] =
    [("boundaries.z_min", r#""periodic""#), ("boundaries.z_max", r#""periodic""#)];

fn run(case_text: &str, name: &str) -> (PathBuf, Output) {
    let dir = std::env::temp_dir().join(format!("plumefield-e2e-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    let case = dir.join("case.toml");
    std::fs::write(&case, case_text).expect("write case");
    let out = dir.join("out");
    let output = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["run", case.to_str().unwrap_or_default(), "-o", out.to_str().unwrap_or_default()])
        .output()
        .expect("run the binary");
    (out, output)
}

fn summary_number(summary: &str, path: &[&str]) -> f64 {
    // A tiny JSON walk without a JSON dependency in the test: serde_json is a dependency of the package.
    let mut v: serde_json::Value = serde_json::from_str(summary).expect("summary.json parses");
    for key in path {
        v = v[*key].clone();
    }
    v.as_f64().unwrap_or_else(|| panic!("{path:?} is not a number in summary.json"))
}

/// Every stage of a steady run has its wall time and, where the kernel resets the high-water mark, its own
/// peak resident memory: at least the grid-sized fields alive in it, at most the run's peak.
fn check_stage_resources(summary: &str) {
    let v: serde_json::Value = serde_json::from_str(summary).expect("summary.json parses");
    let r = &v["resources"];
    assert!(v.get("timing_s").is_none(), "the old section name is gone");
    let stages = ["geometry", "flow", "transport", "post", "self_neighbour_split", "write"];
    let scope = r["peak_memory_scope"].as_str().expect("peak_memory_scope");
    let mut total = 0.0;
    for stage in stages {
        let wall = r[stage]["wall_s"].as_f64().unwrap_or_else(|| panic!("resources.{stage}.wall_s"));
        assert!(wall >= 0.0, "{stage}: {wall}");
        total += wall;
        let peak = r[stage]["peak_resident_bytes"].as_u64();
        match scope {
            "unavailable" => assert!(peak.is_none(), "{stage}"),
            _ => assert!(peak.is_some_and(|p| p > 1 << 20), "{stage}: {peak:?}"),
        }
    }
    assert!(total <= r["total_s"].as_f64().expect("total_s") + 1e-6);
    assert!(r.get("transport_far_field_s").is_none(), "no far-field faces, no far-field time");
    if scope == "stage" || scope == "since_start" {
        let status = std::fs::read_to_string("/proc/self/status").expect("/proc on Linux");
        assert!(status.contains("VmHWM"), "a meter that reads VmHWM");
    }
}

#[test]
fn run_writes_contract_outputs_with_closed_mass_balance() {
    let (out, output) = run(&small_chamber(&INLET_OUTLET), "ok");
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "stderr: {stderr}");
    for file in ["cells.csv", "fields.h5", "fields.xmf", "summary.json"] {
        assert!(out.join(file).is_file(), "{file} missing; stderr: {stderr}");
    }
    let csv = std::fs::read_to_string(out.join("cells.csv")).expect("cells.csv");
    let header = csv.lines().next().unwrap_or_default();
    assert!(
        header.starts_with(CONTRACT_COLUMNS),
        "expected header to start with\n{CONTRACT_COLUMNS}\nactual\n{header}"
    );
    assert_eq!(csv.lines().count(), 7, "6 cells + header");

    let summary = std::fs::read_to_string(out.join("summary.json")).expect("summary.json");
    let rel = summary_number(&summary, &["mass_balance", "relative_error"]);
    assert!(rel <= 10.0 * 1e-8, "mass balance relative error {rel:e} > 10 × tolerance");
    let secreted = summary_number(&summary, &["mass_balance", "secreted"]);
    assert!((secreted - 6.0 * 2000.0 / 3600.0).abs() < 1e-9 * secreted, "secreted {secreted}");
    let divergence = summary_number(&summary, &["flow", "max_divergence"]);
    // Divergence relative to the flow's own scale U/h = 1 /s.
    assert!(divergence < 1e-6, "max divergence {divergence:e} 1/s");
    check_stage_resources(&summary);

    // Outside readers on the real folder (h5py; VTK when importable).
    if common::python::readers().is_some() {
        let registry =
            common::python::write_column_registry(out.parent().expect("the output folder has a parent"));
        let args = [out.to_str().expect("UTF-8 path"), "--columns", registry.to_str().expect("UTF-8 path")];
        let check = common::python::run_script("check_outputs.py", &args);
        assert!(check.status.success(), "outside-reader check failed (its output is above)");
    }
}

#[test]
fn solver_failure_exits_1_and_writes_nothing() {
    let (out, output) =
        run(&small_chamber(&[&INLET_OUTLET[..], &[("solve.max_iterations", "1")]].concat()), "fail");
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(1), "stderr: {stderr}");
    assert!(stderr.contains("residual"), "the message names the residual reached: {stderr}");
    let written: Vec<_> =
        std::fs::read_dir(&out).map(|d| d.flatten().map(|e| e.file_name()).collect()).unwrap_or_default();
    assert!(written.is_empty(), "nothing may be written after a failed solve, found {written:?}");
}

#[test]
fn no_flow_far_field_case_runs() {
    let far = r#""far_field""#;
    let text = small_chamber(&[
        ("boundaries.x_min", far),
        ("boundaries.x_max", far),
        ("boundaries.y_min", far),
        ("boundaries.y_max", far),
        ("boundaries.z_min", far),
        ("boundaries.z_max", far),
        ("flow.mean_velocity", "0"),
    ]);
    let (out, output) = run(&text, "noflow");
    assert_eq!(output.status.code(), Some(0), "stderr: {}", String::from_utf8_lossy(&output.stderr));
    let summary = std::fs::read_to_string(out.join("summary.json")).expect("summary.json");
    let far_field = summary_number(&summary, &["resources", "transport_far_field_s"]);
    let transport = summary_number(&summary, &["resources", "transport", "wall_s"]);
    assert!(far_field > 0.0 && far_field <= transport, "far field {far_field} s of transport {transport} s");
    let csv = std::fs::read_to_string(out.join("cells.csv")).expect("cells.csv");
    // Without flow every cell reports zero local speed and zero drag.
    for line in csv.lines().skip(1) {
        let fields: Vec<&str> = line.split(',').collect();
        let speed: f64 = fields[17].parse().expect("local_speed");
        let drag_x: f64 = fields[14].parse().expect("drag_x");
        assert_eq!(speed, 0.0);
        assert_eq!(drag_x, 0.0);
    }
}
