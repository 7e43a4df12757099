//! The memory forecast (`src/forecast.rs`, behind `estimate`, `--plan` and the memory check of `run`) against
//! the measured peak of a real run on one thread: the largest stage peak of `summary.json` → `resources`. Memory
//! does not depend on the machine's load, so it is asserted here; time forecasts are compared in
//! `bench/RECORDS.md` only.

use std::path::Path;
use std::process::Command;

/// A 200 × 200 × 100 µm chamber at 2 µm (500,000 grid cells) with 150 random cells and the default
/// self/neighbour split, in the given medium.
fn case_text(medium: &str) -> String {
    format!(
        r#"title = "forecast check"
[chamber]
size = ["200 um", "200 um", "100 um"]
[grid]
spacing = "2 um"
[medium]
{medium}
[flow]
mean_velocity = "1 um/s"
[boundaries]
x_min = "inlet"
x_max = "outlet"
y_min = "wall"
y_max = "wall"
z_min = "symmetry"
z_max = "symmetry"
[ligand]
diffusivity = "1e-10 m^2/s"
decay_rate = "1e-4 /s"
[cells]
radius = "8 um"
secretion_rate = "2000 /h"
uptake = {{ model = "first_order", rate_constant = "1e-6 m/s" }}
layout = {{ kind = "random", count = 150, min_gap = "2 um", seed = 7 }}
[output]
figures = false
"#
    )
}

/// Runs `text` on one thread; returns (forecast, measured peak) in bytes.
fn forecast_and_peak(dir: &Path, text: &str) -> Option<(f64, f64)> {
    let case_path = dir.join("case.toml");
    std::fs::write(&case_path, text).expect("write the case");
    let case = plumefield::case::Case::load(&case_path).expect("a valid case");
    let forecast = plumefield::forecast::Forecast::of(&case).memory_bytes_on(1);
    let out = dir.join("out");
    let status = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["run", "--threads", "1"])
        .arg(&case_path)
        .arg("-o")
        .arg(&out)
        .output()
        .expect("run the binary");
    assert!(status.status.success(), "{}", String::from_utf8_lossy(&status.stderr));
    let summary: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("summary.json")).expect("summary.json"))
            .expect("JSON");
    let resources = &summary["resources"];
    if resources["peak_memory_scope"] != "stage" {
        eprintln!("skipped: the kernel did not reset the high-water mark per stage on this machine");
        return None;
    }
    let peak = resources
        .as_object()
        .expect("resources")
        .values()
        .filter_map(|stage| stage.get("peak_resident_bytes").and_then(serde_json::Value::as_u64))
        .max()
        .expect("stage peaks") as f64;
    Some((forecast, peak))
}

#[test]
fn memory_forecast_is_within_30_percent_of_a_measured_run() {
    for medium in [
        "model = \"darcy\"\nviscosity = \"1e-3 Pa s\"\npermeability = \"1e-13 m^2\"",
        "model = \"brinkman\"\nviscosity = \"1e-3 Pa s\"\npermeability = \"1e-11 m^2\"",
    ] {
        let dir = tempfile::tempdir().expect("temp dir");
        let Some((forecast, peak)) = forecast_and_peak(dir.path(), &case_text(medium)) else { return };
        let ratio = forecast / peak;
        assert!((0.7..=1.3).contains(&ratio), "{medium}: forecast {forecast:.3e} B, measured {peak:.3e} B");
    }
}
