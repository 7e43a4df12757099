//! The run engine behind `plumefield run` and the cases of a local sweep: case → geometry → flow → transport →
//! per-cell sensing → outputs, for steady runs (here and `report.rs`) and transient runs (`transient/`), with
//! one output schema (`crate::outputs`) and one summary builder (`summary.rs`).
//!
//! Nothing is written until every solve has succeeded; each output file is written atomically.

pub mod estimates;
mod report;
pub mod sensing_outputs;
pub mod stages;
mod summary;
pub mod transient;

use crate::case::{Case, SolveMode};
use crate::exit::{InputError, SolverFailure};
use crate::io::output_folder::{LeftStaging, OutputFolder, OutputFolderError};
use anyhow::{Context, Result};
use solver::linalg::KrylovParams;
use solver::solve_case::{solve_steady_case, SteadyCase, SteadySolution};
use stages::{MeteredStage, StageMeter};
use std::path::Path;
use std::time::Instant;

pub use report::{cell_table, write_outputs};

/// The provenance that every `fields.h5` of a run carries.
fn run_provenance(case: &Case) -> crate::io::fields_h5::Provenance {
    crate::io::fields_h5::Provenance {
        version: env!("CARGO_PKG_VERSION").to_string(),
        git_revision: crate::io::provenance::git_revision(),
        case_sha256: case.sha256.clone(),
        case_text: case.source_text.clone(),
        command_line: std::env::args().collect::<Vec<_>>().join(" "),
    }
}

/// The numerical view of a validated case.
pub fn steady_case(case: &Case) -> SteadyCase<'_> {
    SteadyCase {
        grid: &case.grid,
        layout: &case.layout,
        boundaries: case.boundaries,
        flow: case.flow,
        ligand: case.ligand,
        integration_time: case.sensing.integration_time,
        krylov: KrylovParams {
            relative_tolerance: case.solve.tolerance,
            max_iterations: case.solve.max_iterations,
        },
    }
}

/// Warnings about the numerics of a solved case (for the terminal and summary.json).
pub fn solution_warnings(case: &Case, solution: &SteadySolution) -> Vec<String> {
    let peclet = &solution.transport.assembly.peclet;
    let mut warnings = Vec::new();
    let spacing = solution.geometry.grid.spacing;
    if let Some(w) = solver::transport::boundary_layer::check_boundary_layer(peclet.surface_peclet, spacing) {
        warnings.push(w.to_string());
    } else if peclet.max_cell_peclet > solver::transport::advection::CENTRAL_PECLET_LIMIT {
        warnings.push(format!(
            "the cell Peclet number U h/D reaches {:.1} away from the cells (above 2 on {} faces): advection there is monotone but first order across the stream",
            peclet.max_cell_peclet, peclet.upwinded_faces
        ));
    }
    if let Some(resolution) = &solution.flow_resolution {
        warnings.push(resolution.to_string());
    }
    let flow = &solution.flow;
    let grid = &solution.geometry.grid;
    let tolerance = case.solve.tolerance;
    if let Some(w) =
        solver::flow::check_divergence(grid, &flow.divergence_peak(), case.flow.mean_velocity, tolerance)
    {
        warnings.push(w.to_string());
    }
    warnings
}

/// Every warning a case gets before it is solved: the case's own (from validation), the Brinkman resolution
/// guard and the boundary-layer guard of the stream. The solve may add its own (see [`solution_warnings`]).
pub fn case_warnings(case: &Case) -> Vec<String> {
    let mut warnings = case.warnings.clone();
    warnings.extend(flow_resolution_warning(case));
    warnings.extend(estimates::boundary_layer_warning(case).map(|w| w.to_string()));
    warnings
}

/// The Brinkman resolution guard, told before the solve starts.
fn flow_resolution_warning(case: &Case) -> Option<String> {
    let medium = solver::flow::brinkman::BrinkmanMedium::from_model(case.flow.medium)?;
    solver::flow::brinkman::resolution::check_resolution(&medium, case.grid.spacing).map(|w| w.to_string())
}

/// An output-folder problem as bad input (exit code 2) or a write failure (exit code 1).
fn folder_error(error: OutputFolderError) -> anyhow::Error {
    match error {
        OutputFolderError::Refused(message) => InputError(message).into(),
        io => anyhow::Error::new(io),
    }
}

/// Solves `case` and writes `fields.h5`, `fields.xmf`, `cells.csv` and `summary.json` into `out_dir`.
pub fn execute(case: &Case, out_dir: &Path, threads: Option<usize>) -> Result<()> {
    execute_with(case, out_dir, threads, &transient::TransientOptions::default())
}

/// [`execute`] with the restart options of transient runs (`--checkpoint-every`, `--resume`).
pub fn execute_with(
    case: &Case,
    out_dir: &Path,
    _threads: Option<usize>,
    options: &transient::TransientOptions,
) -> Result<()> {
    let transient = case.solve.mode == SolveMode::Transient;
    if !transient && (options.resume || options.checkpoint_every.is_some()) {
        return Err(InputError(
            "--checkpoint-every and --resume apply to solve.mode = \"transient\" only (a steady run has no time steps)"
                .into(),
        )
        .into());
    }
    // Checked and locked before the solve; the run writes beside it and the folder is replaced whole.
    let left_staging = if options.resume { LeftStaging::Keep } else { LeftStaging::Remove };
    let folder = OutputFolder::prepare(out_dir, &case.input_files, left_staging).map_err(folder_error)?;
    if transient {
        transient::execute(case, folder.staging(), out_dir, options)?;
        return folder.commit().map_err(folder_error);
    }
    let staging = folder.staging().to_path_buf();
    for warning in &case.warnings {
        eprintln!("warning: {warning}");
    }
    let told_before = flow_resolution_warning(case);
    if let Some(warning) = &told_before {
        eprintln!("warning: {warning}");
    }
    let progress = stages::StageProgress::new(5);
    let started = Instant::now();
    let mut meter = StageMeter::new();
    let mut solved = solve_steady_case(&steady_case(case), &mut |stage| {
        progress.numerical_stage(stage);
        meter.begin(MeteredStage::of(stage, true));
    })
    .map_err(|e| anyhow::Error::new(SolverFailure { message: e.to_string() }))?;
    let warnings = solution_warnings(case, &solved);
    for warning in warnings.iter().filter(|&w| Some(w) != told_before.as_ref()) {
        progress.println(&format!("warning: {warning}"));
    }
    progress.stage("self/neighbour split and outputs");
    report::write_outputs(case, &mut solved, &warnings, &staging, &mut meter)
        .with_context(|| format!("cannot write the outputs of {}", out_dir.display()))?;
    folder.commit().map_err(folder_error)?;
    progress.finish(&format!(
        "done in {:.1} s: {} cells, mass balance closes to {:.1e}; outputs in {}",
        started.elapsed().as_secs_f64(),
        case.layout.cells.len(),
        solved.balance.relative_error,
        out_dir.display()
    ));
    Ok(())
}
