//! The one builder of `summary.json` ([`RunSummary`]) for steady and transient runs: the sections every run
//! fills the same way (header, grid, cells, estimates, units) from the case and its `cells.csv` table; each
//! kind of run hands in the sections only it knows ([`RunSections`]).

use std::collections::BTreeMap;

use solver::post::estimates::meanfield_outlet_concentration;
use solver::problem::ChamberFace;

use crate::case::Case;
use crate::engine::estimates::{column_aggregates, CaseEstimates};
use crate::io::provenance::git_revision;
use crate::io::table::CellTable;
use crate::outputs::summary::{
    CellsSummary, EstimatesSummary, FlowSummary, GridSummary, MassBalanceSummary, Resources, RunSummary,
    SplitSummary, TransientSummary, TransportSummary, Unit,
};

/// What every run measures in the same way.
pub struct RunMeasures<'a> {
    pub case: &'a Case,
    /// Volume fraction of fluid in each grid cell.
    pub volume_fraction: &'a [f64],
    /// The `cells.csv` table.
    pub table: &'a CellTable,
    /// Mean velocity in force at the end of the run (m/s), for the mean-field outlet estimate.
    pub final_mean_velocity: f64,
    pub measured_outlet_concentration: Option<f64>,
    /// Warnings of the solve, after those of the case.
    pub warnings: &'a [String],
}

/// The sections that differ between steady and transient runs.
pub struct RunSections {
    pub resources: Resources,
    pub flow: FlowSummary,
    pub transport: TransportSummary,
    pub mass_balance: MassBalanceSummary,
    pub transient: Option<TransientSummary>,
    pub self_neighbour: Option<SplitSummary>,
}

/// Units of the summary's keys (the same for every run; keys a run does not have are listed all the same).
fn units(table: &CellTable) -> BTreeMap<String, Unit> {
    let one = |key: &str, unit: &str| (key.to_string(), Unit::One(unit.to_string()));
    let mut units: BTreeMap<String, Unit> = [
        one("grid.spacing", "m"),
        one("resources.*.wall_s", "s"),
        one("resources.total_s", "s"),
        one("resources.*.peak_resident_bytes", "bytes"),
        one("resources.self_neighbour", "s"),
        one("flow.mean_velocity", "m/s"),
        one("flow.max_divergence", "1/s"),
        one("flow.pressure_drop", "Pa"),
        one("mass_balance", "molecules/s"),
        one("estimates.meanfield_outlet_concentration", "molecules/m^3"),
        one("estimates.measured_outlet_concentration", "molecules/m^3"),
        one("estimates.isolated_anisotropy", "1"),
        one("cells.number_density", "1/m^3"),
        one("sensing.statistics_margin", "m"),
        one("sensing.by_position.x_low", "m"),
        one("sensing.by_position.x_high", "m"),
        one("sensing.time_to_readable", "s"),
    ]
    .into_iter()
    .collect();
    units.insert(
        "cells.csv".into(),
        Unit::Columns(table.columns.iter().map(|c| (c.name.clone(), c.unit.clone())).collect()),
    );
    units
}

/// Units only transient runs have.
fn transient_units(units: &mut BTreeMap<String, Unit>) {
    for (key, unit) in [
        ("mass_balance.stored", "molecules"),
        ("transient.*time*", "s"),
        ("transient.outputs.outlet_concentration", "molecules/m^3"),
        ("transient.outputs.stored", "molecules"),
    ] {
        units.insert(key.into(), Unit::One(unit.into()));
    }
}

impl RunSummary {
    /// The summary of a run from what every run measures and the sections of its kind.
    pub fn build(m: &RunMeasures, sections: RunSections) -> RunSummary {
        let case = m.case;
        let chamber_volume: f64 = case.chamber_size.iter().product();
        let fluid_volume: f64 = m.volume_fraction.iter().sum::<f64>() * case.grid.cell_volume();
        let cell_volume_fraction = 1.0 - fluid_volume / chamber_volume;
        let count = case.layout.cells.len();
        let number_density = count as f64 / chamber_volume;
        let d = case.ligand.diffusivity;
        let estimates = CaseEstimates::for_case(case);
        let sensing = super::sensing_outputs::run_statistics(case, m.table);
        // One line when the per-cell estimate misjudges where cells fail (also kept in `warnings`).
        let estimate_warning = crate::sensing::statistics::estimate_disagreement(&sensing);
        if let Some(line) = &estimate_warning {
            eprintln!("warning: {line}");
        }
        let meanfield = meanfield_outlet_concentration(
            number_density,
            case.secretion_rate,
            case.cell_radius,
            d,
            case.ligand.decay_rate,
            case.ligand.uptake,
            1.0 - cell_volume_fraction,
            m.final_mean_velocity,
            case.chamber_size[0],
            case.ligand.inlet_concentration,
        )
        .filter(|_| case.boundaries.faces[0][0] == ChamberFace::Inlet);
        let mut units = units(m.table);
        if sections.transient.is_some() {
            transient_units(&mut units);
        }
        RunSummary {
            version: env!("CARGO_PKG_VERSION").to_string(),
            git_revision: git_revision(),
            title: case.title.clone(),
            case_sha256: case.sha256.clone(),
            solve_mode: sections.transient.as_ref().map(|_| "transient".to_string()),
            grid: GridSummary {
                shape: case.grid.shape,
                spacing: case.grid.spacing,
                origin: case.grid.origin,
            },
            resources: Some(sections.resources),
            flow: sections.flow,
            transport: sections.transport,
            mass_balance: sections.mass_balance,
            transient: sections.transient,
            estimates: EstimatesSummary {
                meanfield_outlet_concentration: meanfield,
                measured_outlet_concentration: m.measured_outlet_concentration,
                isolated_anisotropy: estimates.isolated_anisotropy,
                peclet_cell: case.flow.mean_velocity * case.cell_radius / d,
                peclet_chamber: case.flow.mean_velocity * case.chamber_size[0] / d,
                per_cell: column_aggregates(m.table),
                self_neighbour: sections.self_neighbour,
                case: estimates.summary(),
            },
            cells: CellsSummary { count, volume_fraction: cell_volume_fraction, number_density },
            sensing: Some(sensing.clone()),
            warnings: case.warnings.iter().chain(m.warnings).cloned().chain(estimate_warning).collect(),
            units,
        }
    }
}

/// The mass-balance section from `[secreted, outflow, uptake, decay, accumulation, relative_error]` and, for
/// transient runs, `(stored, worst_step_relative_error)`.
pub fn mass_balance(terms: [f64; 6], transient: Option<(f64, f64)>) -> MassBalanceSummary {
    let [secreted, outflow, uptake, decay, accumulation, relative_error] = terms;
    MassBalanceSummary {
        secreted,
        outflow,
        uptake,
        decay,
        accumulation,
        relative_error,
        stored: transient.map(|t| t.0),
        worst_step_relative_error: transient.map(|t| t.1),
    }
}
