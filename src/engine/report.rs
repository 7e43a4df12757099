//! Turns a solved case into the output files of DESIGN.md §6: cells.csv, fields.h5 + fields.xmf, summary.json.

use super::stages::{MeteredStage, StageMeter};
use super::summary::{mass_balance, RunMeasures, RunSections};
use crate::case::{Case, OutputField};
use crate::io::cells_csv::write_cells_csv;
use crate::io::fields_h5::{write_fields_h5, FieldData};
use crate::io::table::CellTable;
use crate::io::xdmf::write_fields_xmf;
use crate::outputs::columns::{cell_columns, cell_pressure_drop_column, CellState, RunKind};
use crate::outputs::summary::{FlowMode, FlowSummary, RunSummary, TransportMode, TransportSummary};
use anyhow::Result;
use solver::problem::ChamberFace;
use solver::solve_case::SteadySolution as SolvedCase;
use std::path::Path;

/// The per-cell table, columns in the order DESIGN.md §6 fixes.
pub fn cell_table(case: &Case, solved: &SolvedCase) -> CellTable {
    let state = CellState { cells: &case.layout.cells, sensing: &solved.sensing, drag: &solved.flow.drag };
    let mut table = CellTable { columns: cell_columns(&state, RunKind::Steady) };
    table.columns.push(cell_pressure_drop_column(solved.cell_pressure_drop.clone()));
    // Estimates beside the measured columns, after the contract columns (DESIGN.md §6).
    table.columns.extend(crate::engine::estimates::estimate_columns(case, &solved.sensing));
    table
}

fn field_data<'a>(case: &Case, solved: &'a SolvedCase) -> Vec<FieldData<'a>> {
    let mut fields = Vec::new();
    let f = FieldData::borrowed;
    for wanted in &case.output.fields {
        match wanted {
            OutputField::Velocity => {
                // Derived from the face fluxes for the write only (not kept by the solved case).
                let [u, v, w] = solved.flow.velocity(&case.grid);
                let owned = |name, description, values: Vec<f64>| FieldData {
                    values: values.into(),
                    ..f("flow", name, "m/s", description, &[])
                };
                fields.push(owned("u", "superficial velocity x, cell-centred", u));
                fields.push(owned("v", "superficial velocity y, cell-centred", v));
                fields.push(owned("w", "superficial velocity z, cell-centred", w));
            }
            OutputField::Pressure => fields.push(f(
                "flow",
                "pressure",
                "Pa",
                "pressure, cell-centred (zero at the outlet)",
                &solved.flow.pressure,
            )),
            OutputField::Concentration => fields.push(f(
                "ligand",
                "concentration",
                "molecules/m^3",
                "steady ligand concentration, cell-centred (zero inside cells)",
                &solved.transport.concentration,
            )),
        }
    }
    fields
}

/// Flux-weighted concentration leaving through the outlet faces (molecules/m^3), if there is an outlet flux.
fn measured_outlet_concentration(case: &Case, solved: &SolvedCase) -> Option<f64> {
    if case.boundaries.faces[0][1] != ChamberFace::Outlet {
        return None;
    }
    let grid = &case.grid;
    let nx = grid.shape[0];
    let (mut flux, mut carried) = (0.0, 0.0);
    for k in 0..grid.shape[2] {
        for j in 0..grid.shape[1] {
            let q = solved.flow.face_flux[0][grid.face_index(mesh::Axis::X, nx, j, k)];
            flux += q;
            carried += q * solved.transport.concentration[grid.index(nx - 1, j, k)];
        }
    }
    (flux > 0.0).then(|| carried / flux)
}

/// The self/neighbour split (its own stage of `meter`), then the output files (the write stage).
pub fn write_outputs(
    case: &Case,
    solved: &mut SolvedCase,
    warnings: &[String],
    out_dir: &Path,
    meter: &mut StageMeter,
) -> Result<()> {
    meter.begin(MeteredStage::SelfNeighbourSplit);
    // Each own-field solve at once holds its work vectors and two fields: no more of them than fit under the
    // transport stage's peak, so the split never sets the run's peak.
    let per_solve =
        solved.transport.solver.as_ref().map_or(0, |s| s.solve_work_bytes() + 16 * case.grid.len());
    let parallel_solves = meter.fitting_under_peak_of(MeteredStage::Transport, per_solve);
    let split = crate::engine::estimates::split_self_and_neighbours(case, solved, parallel_solves)?;
    // The operator and hierarchy served the split; nothing after it needs them.
    solved.transport.solver = None;
    meter.begin(MeteredStage::Write);
    let mut table = cell_table(case, solved);
    for warning in &split.warnings {
        eprintln!("warning: {warning}");
    }
    let warnings: Vec<String> = warnings.iter().chain(&split.warnings).cloned().collect();
    let warnings = warnings.as_slice();
    table.columns.extend(split.columns);
    let fields = field_data(case, solved);
    let provenance = super::run_provenance(case);
    write_cells_csv(&out_dir.join("cells.csv"), &table)?;
    // One hold of HDF5's process-wide lock for the whole file (the library runs one call at a time anyway):
    // cases of a sweep writing at once then take turns file by file and drift apart, instead of alternating
    // call by call, which doubled both writes and kept the cases in step to collide again.
    hdf5::sync::sync(|| {
        write_fields_h5(
            &out_dir.join("fields.h5"),
            &case.grid,
            &solved.geometry.volume_fraction,
            &fields,
            &table,
            &provenance,
            case.output.storage,
        )
    })?;
    write_fields_xmf(
        &out_dir.join("fields.xmf"),
        "fields.h5",
        &case.grid,
        &fields,
        case.output.storage.precision,
    )?;

    let measures = RunMeasures {
        case,
        volume_fraction: &solved.geometry.volume_fraction,
        table: &table,
        final_mean_velocity: case.flow.mean_velocity,
        measured_outlet_concentration: measured_outlet_concentration(case, solved),
        warnings,
    };
    let mut resources = meter.resources(split.cost);
    resources.transport_far_field_s = (solved.timing.far_field > 0.0).then_some(solved.timing.far_field);
    let sections = RunSections {
        resources,
        flow: FlowSummary {
            model: case.flow.medium.name().to_string(),
            mean_velocity: case.flow.mean_velocity,
            iterations: solved.flow.iterations,
            relative_residual: solved.flow.relative_residual,
            max_divergence: solved.flow.max_divergence,
            pressure_drop: solved.flow.pressure_drop,
            mode: FlowMode::Steady {
                screening_length_resolved: solved.flow_resolution.is_none(),
                expected_drag_error: solved.flow_resolution.as_ref().map(|w| w.expected_drag_error),
                suggested_spacing: solved.flow_resolution.as_ref().map(|w| w.suggested_spacing),
            },
        },
        transport: TransportSummary {
            iterations: solved.transport.iterations,
            mode: TransportMode::Steady {
                relative_residual: solved.transport.relative_residual,
                max_cell_peclet: solved.transport.assembly.peclet.max_cell_peclet,
                upwinded_faces: solved.transport.assembly.peclet.upwinded_faces,
            },
        },
        mass_balance: {
            let b = &solved.balance;
            mass_balance([b.secreted, b.outflow, b.uptake, b.decay, b.accumulation, b.relative_error], None)
        },
        transient: None,
        self_neighbour: Some(split.summary),
    };
    let summary = RunSummary::build(&measures, sections);
    crate::engine::sensing_outputs::write_sensing_by_position_of(&summary, &table, out_dir)?;
    summary.write(&out_dir.join("summary.json"))?;
    if case.output.figures {
        crate::figures::run_figures::draw_run_figures(out_dir)?;
    }
    Ok(())
}
