//! Time to a readable cue: one reflecting cell switched on at t = 0 in a uniform stream (far-field faces on all
//! six sides), against the crossing time predicted from a steady run of the same case.
//!
//! Derivation (ours). At steady state a reflecting cell counts at the rate R and its front–back contrast is m
//! (both from the steady run), so over a window of length T the direction error is
//! e(T) = √((1 − m²)/(R T))/|m| (Berg & Purcell 1977 counting, the delta-method variance of
//! `solver::post::counting_noise`): it falls as 1/√T, and from the steady run's error e₀ at its integration time
//! T₀ the error reaches ε at T* = T₀ (e₀/ε)².
//!
//! Switched on at t = 0 the surface field first has to build up: without flow its deficit falls only like
//! a/√(πDt) (the sphere's own surface value, Carslaw & Jaeger 1959 §9.10), and a stream cuts that tail off near
//! D/U². Once the field is steady the counts grow at the steady rates, N(t) = R (t − τ_d) and
//! N_front − N_back = R m (t − τ_m), with the deficits τ_d = ∫(1 − R(t)/R) dt and τ_m the same for R·m.
//! For a point source switched on in a stream, c(a, t) = ∫₀ᵗ q (4πDs)^(−3/2) exp(−|a − Us|²/4Ds) ds, whose
//! shortfall integrates to ∫ s q (4πDs)^(−3/2) e^(−U²s/4D) ds = q/(4πDU), against c_s ≈ q/(4πDa): τ_d ≈ a/U to
//! leading order in the Péclet number. With the deficits the crossing solves
//! N/(N_front − N_back)² − 1/N = ε², i.e. T ≈ T* + 2τ_m − τ_d: a shift of order a/U, which the choice
//! T* ≥ 100 D/U² keeps far below 2 % (here a/U = 5 s against T* ≈ 1.7e4 s).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const RADIUS: f64 = 5e-6;
const SPEED: f64 = 1e-6;
const DIFFUSIVITY: f64 = 1e-10;
const INTEGRATION_TIME: f64 = 3600.0;

/// A 40 µm cube at h = 1.25 µm, one reflecting cell of radius 5 µm in its centre, cell Péclet Ua/D = 0.05;
/// the secretion rate puts the readable time near 1.7e4 s = 170 D/U².
fn case_text(solve: &str) -> String {
    format!(
        r#"title = "one reflecting cell switched on in a stream"
[chamber]
size = ["40 um", "40 um", "40 um"]
[grid]
spacing = "1.25 um"
[medium]
model = "darcy"
viscosity = "1e-3 Pa s"
permeability = "1e-13 m^2"
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
radius = "5 um"
secretion_rate = "2700 /h"
uptake = {{ model = "none" }}
list = [{{ x = "20 um", y = "20 um", z = "20 um" }}]
[sensing]
integration_time = "1 h"
[output]
fields = []
figures = false
{solve}
"#
    )
}

fn run(dir: &Path, name: &str, text: &str) -> (PathBuf, Output) {
    let case = dir.join(format!("{name}.toml"));
    std::fs::write(&case, text).expect("write case");
    let out = dir.join(name);
    let output = Command::new(env!("CARGO_BIN_EXE_plumefield"))
        .args(["run", &case.display().to_string(), "-o", &out.display().to_string()])
        .output()
        .expect("run the binary");
    assert_eq!(output.status.code(), Some(0), "{}", String::from_utf8_lossy(&output.stderr));
    (out, output)
}

/// The rows of a CSV file as (header → value) maps.
fn rows(path: &Path) -> Vec<std::collections::HashMap<String, f64>> {
    let mut reader = csv::Reader::from_path(path).expect("open csv");
    let header: Vec<String> = reader.headers().expect("header").iter().map(String::from).collect();
    reader
        .records()
        .map(|r| {
            let r = r.expect("row");
            header.iter().cloned().zip(r.iter().map(|v| v.parse::<f64>().unwrap_or(f64::NAN))).collect()
        })
        .collect()
}

/// The t at which N/Δ² − 1/N = ε² with N = R(t − τ_d), Δ = R m (t − τ_m): bisection (the left side falls with t).
fn crossing_with_deficits(rate: f64, contrast: f64, tau_d: f64, tau_m: f64, level: f64) -> f64 {
    let excess = |t: f64| {
        let n = rate * (t - tau_d);
        let d = rate * contrast * (t - tau_m);
        n / (d * d) - 1.0 / n - level * level
    };
    let (mut low, mut high) = (tau_d.max(tau_m) + 1.0, 1e9);
    for _ in 0..200 {
        let mid = 0.5 * (low + high);
        if excess(mid) > 0.0 {
            low = mid;
        } else {
            high = mid;
        }
    }
    0.5 * (low + high)
}

#[test]
fn readable_time_of_a_cell_switched_on_in_a_stream_follows_the_steady_error() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (steady, _) = run(dir.path(), "steady", &case_text(""));
    let cell = &rows(&steady.join("cells.csv"))[0];
    let (e0, m) = (cell["direction_error"], cell["front_back_contrast"]);
    let predicted = INTEGRATION_TIME * e0 * e0;
    let rate = (1.0 - m * m) / (m * m * predicted);
    let diffusion_cut_off = DIFFUSIVITY / (SPEED * SPEED);
    assert!(predicted >= 100.0 * diffusion_cut_off, "T* = {predicted} s is not ≫ D/U²");

    // Log-spaced output times, no field snapshots, and a stop at steady state that has to wait for the cell.
    let end = 3.0 * predicted;
    let solve = format!(
        "[solve]\nmode = \"transient\"\nend_time = {end}\ntime_step = \"0.5 s\"\nadaptive = true\nstop_at_steady = true\noutput_times = {{ from = \"10 s\", to = {end}, count = 24, scale = \"log\" }}"
    );
    let (transient, output) = run(dir.path(), "transient", &case_text(&solve));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(stderr.matches("the run goes on").count(), 1, "{stderr}");
    let measured = rows(&transient.join("cells.csv"))[0]["time_to_readable"];
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(transient.join("summary.json")).expect("summary"))
            .expect("summary parses");
    let final_time = summary["transient"]["final_time"].as_f64().expect("final_time");
    assert!(final_time > measured && final_time < end, "stopped at {final_time} s, readable at {measured} s");
    assert_eq!(summary["sensing"]["time_to_readable"]["never"], 0);
    assert_eq!(summary["sensing"]["time_to_readable"]["median"].as_f64(), Some(measured));

    // The brief's check: within 2 % of the steady prediction.
    let off = (measured - predicted) / predicted;
    assert!(off.abs() < 0.02, "readable at {measured} s, steady prediction {predicted} s ({off:+.2e})");

    // Tightened: the deficits read from the run's counts at an output time long after D/U² (but before the
    // crossing), the leading-order τ_d ≈ a/U, and the crossing they predict.
    let series = rows(&transient.join("cells_timeseries.csv"));
    let settled = series
        .iter()
        .find(|r| r["time"] >= 20.0 * diffusion_cut_off && r["time"] < 0.5 * predicted)
        .expect("an output time after the switch-on transient");
    let (t1, front, back) = (settled["time"], settled["window_front_count"], settled["window_back_count"]);
    let tau_d = t1 - (front + back) / rate;
    let tau_m = t1 - (front - back) / (rate * m);
    let advection = RADIUS / SPEED;
    assert!((tau_d - advection).abs() < 0.1 * advection, "τ_d = {tau_d} s, a/U = {advection} s");
    let corrected = crossing_with_deficits(rate, m, tau_d, tau_m, 1.0);
    let off = (measured - corrected) / corrected;
    assert!(off.abs() < 1e-4, "readable at {measured} s, with the deficits {corrected} s ({off:+.2e})");

    // No concentration snapshots: fields.h5 holds the grid, the cells and the output times only.
    let h5 = hdf5::File::open(transient.join("fields.h5")).expect("open fields.h5");
    assert!(!h5.link_exists("ligand/000000") && !h5.link_exists("ligand/concentration"));
    assert_eq!(
        h5.dataset("ligand/times").and_then(|d| d.read_raw::<f64>()).expect("times").len(),
        summary["transient"]["outputs"]["time"].as_array().expect("times").len()
    );
}
