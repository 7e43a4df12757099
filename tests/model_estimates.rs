//! `summary.json` reads back through its type (`RunSummary`) and is written again byte for byte, and it names
//! the run's own flow model and carries the isolated-cell estimate of that model, for
//! steady and transient runs of each flow model (Darcy, Brinkman, Stokes). The expected anisotropy comes from
//! the independent reference implementation (`validation::reference::low_peclet`, shared/REFERENCES.md E.3/E.6:
//! `A = Pe·J_β / (3[2 + 2β + β² + Bi(1 + β)])`, Darcy J = 3/4, Stokes J_β closed form, Brinkman by quadrature).

use std::path::PathBuf;
use std::process::Command;

use plumefield::outputs::RunSummary;
use validation::reference::low_peclet::{anisotropy_per_peclet_with_decay, Flow};

mod common;

const RADIUS: f64 = 10e-6;
const DIFFUSIVITY: f64 = 1e-10;
const SPEED: f64 = 2e-6;
const DECAY: f64 = 1e-4;
const RATE_CONSTANT: f64 = 1e-6;
/// Brinkman: μ = μ_e = 1e-3 Pa s, K = 1e-10 m², so α = a√(μ/(μ_e K)) = 1.
const BRINKMAN_PERMEABILITY: f64 = 1e-10;

/// A tiny chamber (12 × 8 × 8 grid cells) with two cells: the test is about the summary, not the field.
fn case_text(model: &str, transient: bool) -> String {
    let model_toml = format!("\"{model}\"");
    let mut changes = vec![
        ("chamber.size", r#"["48 um", "32 um", "32 um"]"#),
        ("grid.spacing", r#""4 um""#),
        ("medium.model", model_toml.as_str()),
        ("ligand.decay_rate", r#""1e-4 /s""#),
        ("cells.radius", r#""10 um""#),
        ("cells.layout", r#"{ kind = "random", count = 1, min_gap = "2 um", seed = 1 }"#),
    ];
    match model {
        "brinkman" => changes.push(("medium.permeability", r#""1e-10 m^2""#)),
        "stokes" => changes.push(("medium.permeability", "")),
        _ => {}
    }
    if transient {
        changes.extend([
            ("solve.mode", r#""transient""#),
            ("solve.end_time", r#""40 s""#),
            ("solve.time_step", r#""20 s""#),
            ("solve.output_every", r#""40 s""#),
        ]);
    }
    common::small_chamber(&changes)
}

fn run_summary(model: &str, transient: bool) -> serde_json::Value {
    let mode = if transient { "transient" } else { "steady" };
    let dir: PathBuf = std::env::temp_dir()
        .join(format!("plumefield-model-estimates-{}-{model}-{mode}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    let case = dir.join("case.toml");
    std::fs::write(&case, case_text(model, transient)).expect("write case");
    let out = dir.join("out");
    let output = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["run", &case.display().to_string(), "-o", &out.display().to_string(), "--threads", "1"])
        .output()
        .expect("run the binary");
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    let path = out.join("summary.json");
    let text = std::fs::read_to_string(&path).expect("summary.json");
    // Read back through its type and written again, the summary is the same byte for byte.
    let typed = RunSummary::read(&path).expect("summary.json reads as a RunSummary");
    let again = dir.join("again.json");
    typed.write(&again).expect("write the summary again");
    let again = std::fs::read_to_string(&again).expect("again.json");
    let first_difference = text.lines().zip(again.lines()).find(|(a, b)| a != b);
    assert!(
        again == text,
        "{model} {mode}: the summary read back and written again differs; first: {first_difference:?}"
    );
    let _ = std::fs::remove_dir_all(&dir);
    serde_json::from_str(&text).expect("summary parses")
}

fn check(model: &str, transient: bool) {
    let flow = match model {
        "darcy" => Flow::Darcy,
        "stokes" => Flow::Stokes,
        _ => Flow::Brinkman { alpha: RADIUS * (1.0 / BRINKMAN_PERMEABILITY).sqrt() },
    };
    let peclet = SPEED * RADIUS / DIFFUSIVITY;
    let biot = RATE_CONSTANT * RADIUS / DIFFUSIVITY;
    let beta = RADIUS * (DECAY / DIFFUSIVITY).sqrt();
    let want = peclet * anisotropy_per_peclet_with_decay(flow, biot, beta).expect("reference anisotropy");
    let s = run_summary(model, transient);
    assert_eq!(s["flow"]["model"].as_str(), Some(model), "flow.model of a {model} run");
    assert_eq!(s["estimates"]["case"]["flow_model"].as_str(), Some(model));
    for key in [&s["estimates"]["isolated_anisotropy"], &s["estimates"]["case"]["isolated_anisotropy"]] {
        let got = key.as_f64().expect("isolated anisotropy is a number");
        assert!(((got - want) / want).abs() < 1e-9, "{model}: summary {got:.12e} vs reference {want:.12e}");
    }
}

#[test]
fn steady_darcy_summary_names_its_model_and_estimate() {
    check("darcy", false);
}

#[test]
fn steady_brinkman_summary_names_its_model_and_estimate() {
    check("brinkman", false);
}

#[test]
fn steady_stokes_summary_names_its_model_and_estimate() {
    check("stokes", false);
}

#[test]
fn transient_darcy_summary_names_its_model_and_estimate() {
    check("darcy", true);
}

#[test]
fn transient_brinkman_summary_names_its_model_and_estimate() {
    check("brinkman", true);
}

#[test]
fn transient_stokes_summary_names_its_model_and_estimate() {
    check("stokes", true);
}
