//! `plumefield estimate CASE [--json]`: the cheap estimates of a case, instantly, without a solve — Péclet
//! numbers, the isolated-cell low-Péclet anisotropy for the case's flow model, the mean-field background along
//! the chamber, the anisotropy and direction error that follow from it along x, the number density at which
//! the direction error reaches 1, and a memory and time forecast for `run`.
//!
//! The estimates are applied to the case by `crate::engine::estimates` (the formulas live in
//! `solver::post::estimates`); this file prints them as a table or as JSON.

use std::fmt::Write as _;
use std::path::Path;

use solver::post::estimates::IsolatedFlow;

use crate::case::Case;
use crate::engine::estimates::CaseEstimates;
use solver::post::chamber_estimates::{Background, CriticalDensity};

impl CaseEstimates {
    /// Plain aligned table for the terminal.
    pub fn table(&self, case: &Case) -> String {
        let mut t = String::new();
        let row = |t: &mut String, name: &str, value: String| {
            let _ = writeln!(t, "{name:<44} {value}");
        };
        let opt =
            |v: Option<f64>, fmt: &dyn Fn(f64) -> String| v.map_or("n/a (absorbing cells)".to_string(), fmt);
        row(&mut t, "case", format!("{} ({})", case.title, case.source_path.display()));
        let model = match self.flow {
            IsolatedFlow::Brinkman { alpha } => format!("brinkman, alpha = a/sqrt(K mu_e/mu) = {alpha:.3}"),
            other => other.name().to_string(),
        };
        row(&mut t, "flow model", model);
        if let Some(w) = &self.flow_resolution {
            row(
                &mut t,
                "screening length sqrt(mu_e K/mu) vs grid",
                format!(
                    "UNDER-RESOLVED: {:.3e} m = {:.2} spacings; expected drag error {:.1}%; suggested spacing {:.3e} m",
                    w.screening_length,
                    w.screening_length / w.spacing,
                    100.0 * w.expected_drag_error,
                    w.suggested_spacing
                ),
            );
        }
        row(&mut t, "cell radius a", format!("{:.3} um", self.radius * 1e6));
        row(&mut t, "Peclet number, cell scale U a/D", format!("{:.4e}", self.peclet_cell));
        row(&mut t, "Peclet number, chamber scale U L/D", format!("{:.4e}", self.peclet_chamber));
        row(&mut t, "surface Biot number kappa a/D", opt(self.biot, &|v| format!("{v:.4e}")));
        row(&mut t, "decay number a sqrt(k/D)", format!("{:.4e}", self.decay_number));
        row(
            &mut t,
            "isolated-cell anisotropy (first order in Pe)",
            opt(self.isolated_anisotropy, &|v| format!("{v:.4e}")),
        );
        if self.peclet_cell > 0.1 {
            row(&mut t, "", "(Pe > 0.1: the first-order anisotropy is only indicative)".to_string());
        }
        row(
            &mut t,
            "isolated-cell surface concentration",
            opt(self.own_surface_concentration, &|v| format!("{v:.4e} molecules/m^3")),
        );
        row(
            &mut t,
            "cells, volume fraction",
            format!("{}, {:.4}", case.layout.cells.len(), self.volume_fraction),
        );
        row(
            &mut t,
            "number density",
            format!("{:.4e} per m^3 ({:.4e} per mL)", self.number_density, self.number_density * 1e-6),
        );
        match &self.background {
            Background::Column(c) => row(
                &mut t,
                "mean-field background at the outlet",
                format!(
                    "{:.4e} molecules/m^3 (flux balance rho nu L/U = {:.4e})",
                    c.outlet_concentration(),
                    self.number_density * case.secretion_rate * c.length / c.speed
                ),
            ),
            Background::Uniform(c) => {
                row(&mut t, "mean-field background (uniform)", format!("{c:.4e} molecules/m^3"))
            }
            Background::Isolated => row(
                &mut t,
                "mean-field background",
                "none: open chamber, each cell estimated as isolated".to_string(),
            ),
            Background::Unavailable(why) => {
                row(&mut t, "mean-field background", format!("not estimated: {why}"))
            }
        }
        if !self.profile.is_empty() {
            let _ = writeln!(
                t,
                "\nalong the chamber (typical cell; integration time {:.4} h):",
                case.sensing.integration_time / 3600.0
            );
            let _ = writeln!(
                t,
                "{:>10} {:>14} {:>16} {:>14} {:>12}",
                "x (um)", "background", "surface conc.", "anisotropy", "dir. error"
            );
            let _ = writeln!(
                t,
                "{:>10} {:>14} {:>16} {:>14} {:>12}",
                "", "(molec/m^3)", "(molec/m^3)", "(along flow)", "(1)"
            );
            for p in &self.profile {
                let s = &p.sensing;
                let _ = writeln!(
                    t,
                    "{:>10.1} {:>14.4e} {:>16.4e} {:>14.4e} {:>12.4e}",
                    p.x * 1e6,
                    s.background,
                    s.mean_surface_concentration,
                    s.anisotropy_along_flow,
                    s.direction_error
                );
            }
            let _ = writeln!(t);
        }
        let cell_volume = 4.0 / 3.0 * std::f64::consts::PI * self.radius.powi(3);
        let level = self.critical_density.map_or(1.0, |c| c.level);
        let outlet = format!("density where the error rises through {level} (outlet)");
        match self.critical_density {
            Some(CriticalDensity { density: Some(rho), .. }) => {
                row(&mut t, &outlet, format!("{rho:.4e} per m^3 (volume fraction {:.3e})", rho * cell_volume))
            }
            Some(CriticalDensity { density: None, range, none_because, isolated_error, .. }) => row(
                &mut t,
                &outlet,
                format!(
                    "none between {:.2e} and {:.2e} per m^3: {} (nearly isolated cell: {isolated_error:.3e})",
                    range[0],
                    range[1],
                    none_because.map_or("", |n| n.reason())
                ),
            ),
            None => row(&mut t, &outlet, "not estimated (no mean-field background)".to_string()),
        }
        if let Some(c) = self.critical_density {
            row(&mut t, "direction error at the outlet, this density", format!("{:.4e}", c.case_error));
        }
        if !self.critical_density_by_position.is_empty() {
            let _ = writeln!(
                t,
                "\ndensity where crowding raises the direction error through {level}, by position:"
            );
            let _ = writeln!(t, "{:>10} {:>16} {:>16}", "x (um)", "density (1/m^3)", "volume fraction");
            for (x, c) in &self.critical_density_by_position {
                let line = match c {
                    Some(CriticalDensity { density: Some(rho), .. }) => {
                        format!("{rho:>16.4e} {:>16.4e}", rho * cell_volume)
                    }
                    Some(CriticalDensity { none_because: Some(why), .. }) => {
                        format!("{:>16} {:>16}  {}", "none", "-", why.reason())
                    }
                    _ => format!("{:>16} {:>16}", "none", "-"),
                };
                let _ = writeln!(t, "{:>10.1} {line}", x * 1e6);
            }
            if let Some(layer) = self.outlet_layer {
                let _ = writeln!(
                    t,
                    "(within {:.1} um of the outlet the column forces the background gradient to zero)",
                    layer * 1e6
                );
            }
            let _ = writeln!(t);
        }
        let regime = if self.regime_breaches.is_empty() {
            "expected to hold (volume fraction, cell and chamber Peclet numbers within its range)".to_string()
        } else {
            format!("not expected to hold: {}", self.regime_breaches.join("; "))
        };
        row(&mut t, "mean-field estimate", regime);
        let f = &self.forecast;
        row(
            &mut t,
            "run forecast: grid cells",
            format!(
                "{} ({} x {} x {})",
                f.grid_cells, case.grid.shape[0], case.grid.shape[1], case.grid.shape[2]
            ),
        );
        row(&mut t, "run forecast: memory", format!("{:.2} GB", f.memory_bytes / 1e9));
        row(
            &mut t,
            &format!("run forecast: wall time on {} thread(s)", f.threads),
            format!("{:.1} s (+ {:.1} s self/neighbour decomposition)", f.seconds, f.decompose_seconds),
        );
        t
    }
}

/// Load the case, print the estimates (table, or JSON with `json`); warn on stderr when the run forecast
/// exceeds the node's memory (`node_memory`, else this machine's).
pub fn execute(case_path: &Path, json: bool, node_memory: Option<f64>) -> anyhow::Result<()> {
    let case = Case::load(case_path)?;
    let estimates = CaseEstimates::for_case(&case);
    if let Some(budget) = super::memory_budget::node_budget(node_memory) {
        let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
        if let Some(warning) = super::memory_budget::over_budget(&case, threads, &budget) {
            eprintln!("warning: {warning}; `plumefield run` would refuse it");
        }
    }
    if json {
        println!("{}", serde_json::to_string_pretty(&serde_json::to_value(estimates.summary())?)?);
    } else {
        for warning in crate::engine::case_warnings(&case) {
            eprintln!("warning: {warning}");
        }
        print!("{}", estimates.table(&case));
    }
    Ok(())
}
