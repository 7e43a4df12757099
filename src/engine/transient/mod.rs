//! `plumefield run CASE` for `[solve] mode = "transient"`: the case as a `TransientCase`, the time loop of
//! `solver::solve_transient` with progress, restart records and checkpoints, then the outputs:
//! `fields.h5` (steady layout for the final state + one dataset per output time), the temporal `fields.xmf`,
//! `cells.csv` (final time), `cells_timeseries.csv` (every output time, long format), `summary.json`, figures.
//! With `[sensing] decompose` given, both tables carry the self/neighbour split of the chosen cells.
//!
//! Restart (`--checkpoint-every`, `--resume`): see [`restart_files`]. A resumed run continues the saved solver
//! state bit for bit and re-reads the output times written before the interruption, so its files equal those
//! of an uninterrupted run.

mod cell_series;
mod checkpoint_every;
mod observer;
mod progress;
mod restart_files;
mod summary;

use std::path::Path;
use std::time::Instant;

use anyhow::{Context, Result};
use solver::linalg::MultigridParams;
use solver::problem::ChamberFace;
use solver::solve_transient::{
    solve_transient_case, TimeStepping, TransientCase, TransientError, TransientParams, TransientSolution,
};

use crate::case::transient::{InitialCondition, TransientSolve, STEADY_DISTANCE};
use crate::case::{Case, OutputField};
use crate::engine::stages::{MeteredStage, StageMeter};
use crate::exit::{InputError, SolverFailure};
use crate::io::cells_csv::write_cells_csv;
use crate::io::fields_h5::FieldData;
use crate::io::initial_field::read_initial_concentration;
use crate::io::table::{CellTable, Column, ColumnValues};
use crate::io::transient_h5::{output_dataset_name, write_transient_fields_h5, OutputTime, TransientFile};
use crate::io::xdmf_temporal::{write_temporal_xmf, TemporalGrid};
use crate::outputs::columns::{cell_pressure_drop_column, split_columns, TRANSIENT_TIME_COLUMNS};
use crate::outputs::summary::{
    FlowChange, FlowMode, FlowSummary, OutputSeries, RunSummary, SplitCost, SplitSummary, Stepping,
    TransientSummary, TransportMode, TransportSummary,
};

use super::summary::{mass_balance, RunMeasures, RunSections};
use cell_series::{sensing_of, time_columns, CONTRACT_COLUMNS, RECORD_VALUES};
pub use checkpoint_every::CheckpointEvery;
use observer::RunObserver;
use progress::{human_time, TransientProgress};
use restart_files::{parts_dir, read_checkpoint, read_part, OutputPart};

/// The numerical view of a validated transient case.
pub fn transient_case<'a>(case: &'a Case, t: &TransientSolve) -> TransientCase<'a> {
    let steady = super::steady_case(case);
    let stepping = match t.adaptive {
        None => TimeStepping::Fixed { step: t.time_step },
        Some(tolerance) => {
            TimeStepping::Adaptive { initial_step: t.time_step, tolerance, max_step: t.longest_output_gap }
        }
    };
    let params = TransientParams {
        start_time: 0.0,
        end_time: t.end_time,
        stepping,
        output_times: t.output_times.clone(),
        krylov: steady.krylov.clone(),
        multigrid: MultigridParams::default(),
        window_start: t.window_start,
        readable_error: case.sensing.readable_error,
        steady: None,
        stop_at_steady: t.stop_at_steady,
        switched_on_far_field: true,
        // Ids were checked against the layout when the case was read; the default of a transient case is none.
        split_cells: case.sensing.decompose.choose(case.layout.cells.len()),
    };
    TransientCase {
        steady,
        flow_changes: t.flow_change.into_iter().collect(),
        secretion_start: t.secretion_start.clone(),
        params,
    }
}

/// Options of `run` that only transient cases use.
#[derive(Clone, Debug, Default)]
pub struct TransientOptions {
    pub checkpoint_every: Option<CheckpointEvery>,
    pub resume: bool,
    /// No progress bar and no closing line (a case of a sweep, where several run at once).
    pub quiet: bool,
}

fn solve_error(error: TransientError) -> anyhow::Error {
    match error {
        TransientError::Observer(message) => anyhow::anyhow!("{message}"),
        other => SolverFailure { message: other.to_string() }.into(),
    }
}

/// Warnings about the numerics of a transient case, known before the solve: the boundary-layer guard from the
/// stream's cell Péclet number (as `estimate` reports it).
fn transient_warnings(case: &Case) -> Vec<String> {
    crate::engine::estimates::boundary_layer_warning(case).map(|w| w.to_string()).into_iter().collect()
}

/// The divergence check of each flow phase (the mean velocity before and after a flow change).
fn flow_divergence_warnings(case: &Case, t: &TransientSolve, solution: &TransientSolution) -> Vec<String> {
    let speeds = [case.flow.mean_velocity, last_flow_speed(case, t)];
    let grid = &solution.geometry.grid;
    solution
        .flows
        .iter()
        .zip(speeds)
        .filter_map(|(flow, speed)| {
            solver::flow::check_divergence(grid, &flow.divergence_peak(), speed, case.solve.tolerance)
        })
        .map(|w| w.to_string())
        .collect()
}

/// Solves a transient case into `out_dir`; the closing line names `destination`, the folder the user asked
/// for (`out_dir` is the staging folder beside it when `run` replaces the folder whole).
pub fn execute(case: &Case, out_dir: &Path, destination: &Path, options: &TransientOptions) -> Result<()> {
    let Some(t) = case.solve.transient.as_ref() else {
        return Err(InputError("solve.mode = \"transient\" without transient settings".into()).into());
    };
    if !options.quiet {
        for warning in case.warnings.iter().chain(&transient_warnings(case)) {
            eprintln!("warning: {warning}");
        }
    }
    let initial = match &t.initial {
        InitialCondition::Zero => None,
        InitialCondition::Fields(path) => {
            Some(read_initial_concentration(path, &case.grid).map_err(|e| InputError(e.to_string()))?)
        }
    };
    std::fs::create_dir_all(out_dir)
        .with_context(|| format!("cannot create output folder {}", out_dir.display()))?;
    let resume = if options.resume { Some(read_checkpoint(out_dir, &case.sha256)?) } else { None };
    let parts = parts_dir(out_dir);
    if resume.is_none() && parts.exists() {
        // Output times of an earlier run in this folder: this run writes its own.
        std::fs::remove_dir_all(&parts).with_context(|| format!("cannot clear {}", parts.display()))?;
    }
    std::fs::create_dir_all(&parts).with_context(|| format!("cannot create {}", parts.display()))?;

    let tcase = transient_case(case, t);
    let times = tcase.params.output_times.clone();
    let eps = 1e-9 * t.end_time;
    let progress = TransientProgress::new(0.0, t.end_time, options.quiet);
    if let Some(state) = &resume {
        progress.println(&format!(
            "resuming from {} at t = {} (step {}, {} output times written)",
            restart_files::checkpoint_path(out_dir).display(),
            human_time(state.time),
            state.steps,
            state.outputs_done
        ));
    }
    let start_mark = resume.as_ref().map_or((0, 0.0), |s| (s.steps, s.time));
    let mut observer = RunObserver::new(
        out_dir,
        &case.sha256,
        &progress,
        options.checkpoint_every,
        start_mark,
        &times,
        t.end_time,
        eps,
        STEADY_DISTANCE,
    );
    observer.keep_fields = writes_snapshots(case);
    let started = Instant::now();
    // Quiet runs are a sweep's cases, side by side in one process: times only, the process's peak is theirs.
    let mut meter = if options.quiet { StageMeter::times_only() } else { StageMeter::new() };
    let solution = solve_transient_case(&tcase, initial, resume, &mut observer, &mut |stage| {
        progress.stage(stage);
        meter.begin(MeteredStage::of(stage, false));
    })
    .map_err(solve_error)?;
    for warning in flow_divergence_warnings(case, t, &solution).iter().chain(&split_warnings(&solution)) {
        progress.println(&format!("warning: {warning}"));
    }
    // The own fields ran inside the time loop, step by step: their time is the split's stage.
    if !tcase.params.split_cells.is_empty() {
        meter.carve(MeteredStage::TimeLoop, MeteredStage::SelfNeighbourSplit, observer.split_seconds);
    }
    let split_seconds = observer.split_seconds;
    let checkpoints = observer.checkpoints_written;
    let final_part = observer.last_output.take();
    drop(observer);

    progress.writing();
    meter.begin(MeteredStage::Write);
    let state = &solution.state;
    let Some(final_part) = final_part else {
        return Err(anyhow::anyhow!("the run ended without an output at its final time"));
    };
    let run = FinishedRun {
        solution: &solution,
        final_part: &final_part,
        meter: &meter,
        checkpoints,
        split_seconds,
    };
    write_outputs(case, t, &run, out_dir)?;
    // The run is complete: its restart data are no longer needed.
    std::fs::remove_dir_all(&parts).with_context(|| format!("cannot remove {}", parts.display()))?;
    let checkpoint = restart_files::checkpoint_path(out_dir);
    if checkpoint.exists() {
        std::fs::remove_file(&checkpoint)
            .with_context(|| format!("cannot remove {}", checkpoint.display()))?;
    }
    let ending = if state.stopped_at_steady && state.time < t.end_time - eps {
        format!(
            "steady state reached at t = {} (within {STEADY_DISTANCE:.0e} of the steady field), stopped early as solve.stop_at_steady asks",
            human_time(state.time)
        )
    } else {
        format!("reached t = {}", human_time(state.time))
    };
    progress.finish(&format!(
        "done in {:.1} s: {ending}; {} steps ({} rejected), {} output times, worst step mass balance {:.1e}; outputs in {}",
        started.elapsed().as_secs_f64(),
        state.steps,
        state.rejected_steps,
        state.outputs_done,
        state.worst_balance_error,
        destination.display()
    ));
    Ok(())
}

/// One warning per split cell whose own field failed (its columns are NaN from then on; the run stands).
fn split_warnings(solution: &TransientSolution) -> Vec<String> {
    let failed = solution.state.own_fields.iter().filter_map(|o| Some((o.cell, o.failed?)));
    failed
        .map(|(cell, (time, residual))| {
            let why = if residual.is_nan() {
                "non-finite values".to_string()
            } else {
                format!("no convergence, relative residual {residual:.3e}")
            };
            format!(
                "the self/neighbour split of cell {cell} failed at t = {} ({why}); its split columns are NaN from then on",
                human_time(time)
            )
        })
        .collect()
}

/// The split summary of a run that split cells (`None` without a split).
fn split_summary(case: &Case, solution: &TransientSolution) -> Option<SplitSummary> {
    let own = &solution.state.own_fields;
    (!own.is_empty()).then(|| SplitSummary {
        selection: format!("{:?}", case.sensing.decompose),
        cells: own.len(),
        iterations: Some(own.iter().map(|o| o.iterations).collect()),
    })
}

/// Whether the run writes the concentration (final, steady and one snapshot per output time): only when
/// `[output] fields` lists it.
fn writes_snapshots(case: &Case) -> bool {
    case.output.fields.contains(&OutputField::Concentration)
}

/// The flow phase in force during the step that ends at `time` (0 before the change, 1 after).
fn phase_at(t: &TransientSolve, time: f64, eps: f64) -> usize {
    match t.flow_change {
        Some((at, _)) if time > at + eps => 1,
        _ => 0,
    }
}

/// HDF5 group of the flow of `phase` when there are `phases` phases.
fn flow_group(phase: usize, phases: usize) -> &'static str {
    if phases > 1 && phase == 0 {
        "flow_initial"
    } else {
        "flow"
    }
}

/// The long-format table of every output time: `time`, then the per-time columns.
fn timeseries_table(
    case: &Case,
    t: &TransientSolve,
    solution: &TransientSolution,
    parts: &[OutputPart],
) -> CellTable {
    let eps = 1e-9 * t.end_time;
    let mut columns: Vec<Column> = Vec::new();
    let mut time = Vec::new();
    for part in parts {
        let drag = &solution.flows[phase_at(t, part.time, eps).min(solution.flows.len() - 1)].drag;
        let cols = time_columns(case, &part.sensed, drag, &t.secretion_start);
        time.extend(std::iter::repeat(part.time).take(case.layout.cells.len()));
        if columns.is_empty() {
            columns = cols;
        } else {
            for (all, now) in columns.iter_mut().zip(cols) {
                match (&mut all.values, now.values) {
                    (ColumnValues::Int(a), ColumnValues::Int(b)) => a.extend(b),
                    (ColumnValues::Real(a), ColumnValues::Real(b)) => a.extend(b),
                    _ => {}
                }
            }
        }
    }
    if columns.is_empty() {
        columns = time_columns(
            case,
            &vec![0.0; RECORD_VALUES * case.layout.cells.len()],
            &solution.flows[0].drag,
            &t.secretion_start,
        );
        for c in &mut columns {
            match &mut c.values {
                ColumnValues::Int(v) => v.clear(),
                ColumnValues::Real(v) => v.clear(),
            }
        }
    }
    let mut all = vec![Column::real("time", "s", "simulated time of the output", time)];
    all.extend(columns);
    if !solution.params.split_cells.is_empty() {
        // Last, one block per output time as the rows.
        let n = case.layout.cells.len();
        let mut split: Vec<Column> = split_columns(n, &[]);
        for c in &mut split {
            if let ColumnValues::Real(v) = &mut c.values {
                v.clear();
            }
        }
        for part in parts {
            for (all, now) in split.iter_mut().zip(split_columns(n, &part.splits)) {
                if let (ColumnValues::Real(a), ColumnValues::Real(b)) = (&mut all.values, now.values) {
                    a.extend(b);
                }
            }
        }
        all.extend(split);
    }
    CellTable { columns: all }
}

/// The final `cells.csv`: the steady contract columns and estimate columns at the final time, then the
/// transient columns and each cell's times to 90% and 99% of its steady sensed rate.
fn final_table(
    case: &Case,
    t: &TransientSolve,
    solution: &TransientSolution,
    part: &OutputPart,
) -> CellTable {
    let eps = 1e-9 * t.end_time;
    let phase = phase_at(t, part.time, eps).min(solution.flows.len() - 1);
    let flow = &solution.flows[phase];
    let mut columns = time_columns(case, &part.sensed, &flow.drag, &t.secretion_start);
    let tail = columns.split_off(CONTRACT_COLUMNS);
    let stencils = solver::embedded::FacetStencils::build(&solution.geometry);
    let pressure_drops = solver::post::cell_pressure_drop::cell_pressure_drop(
        &solution.geometry,
        &stencils,
        &case.layout,
        &flow.face_flux,
        &flow.pressure,
    );
    columns.push(cell_pressure_drop_column(pressure_drops));
    columns.extend(crate::engine::estimates::estimate_columns(
        case,
        &sensing_of(&part.sensed, case.layout.cells.len()),
    ));
    if !solution.params.split_cells.is_empty() {
        // As in a steady run: after the estimate columns.
        columns.extend(split_columns(case.layout.cells.len(), &part.splits));
    }
    columns.extend(tail);
    let crossing = |k: usize| -> Vec<f64> {
        solution.state.crossings.cells.iter().map(|c| c[k].unwrap_or(f64::NAN)).collect()
    };
    let [to_90, to_99, to_readable] = TRANSIENT_TIME_COLUMNS;
    columns.push(to_90.column(crossing(0)));
    columns.push(to_99.column(crossing(1)));
    columns.push(to_readable.column(solution.state.readable.times()));
    // With first-order uptake the sensed rate is the bound rate, so the steady reference is the steady bound rate
    // (the approach-to-steady figure divides `bound_rate` of cells_timeseries.csv by it).
    if matches!(case.ligand.uptake, solver::problem::SurfaceUptake::FirstOrder { .. }) {
        columns.push(Column::real(
            "steady_bound_rate",
            "molecules/s",
            "bound rate of the cell in the steady field of the final configuration (the value it approaches)",
            solution.steady.sensed_rate.clone(),
        ));
    }
    CellTable { columns }
}

/// A finished time loop and what this process measured of it.
struct FinishedRun<'a> {
    solution: &'a TransientSolution,
    final_part: &'a OutputPart,
    meter: &'a StageMeter,
    checkpoints: usize,
    /// Wall seconds of the split's own fields in this process.
    split_seconds: f64,
}

fn write_outputs(case: &Case, t: &TransientSolve, run: &FinishedRun, out_dir: &Path) -> Result<()> {
    let (solution, final_part) = (run.solution, run.final_part);
    let state = &solution.state;
    let cells = case.layout.cells.len();
    let snapshots = writes_snapshots(case);
    let field_len = if snapshots { case.grid.len() } else { 0 };
    let eps = 1e-9 * t.end_time;
    // Every output time, without its field (read again one at a time when fields.h5 is written).
    let mut parts = Vec::with_capacity(state.outputs_done);
    for index in 0..state.outputs_done {
        let mut part = read_part(out_dir, &case.sha256, index, cells, field_len)?;
        part.concentration = Vec::new();
        parts.push(part);
    }
    let series = timeseries_table(case, t, solution, &parts);
    let table = final_table(case, t, solution, final_part);

    let phases = solution.flows.len();
    let mut fields = Vec::new();
    let field = FieldData::borrowed;
    for (phase, flow) in solution.flows.iter().enumerate() {
        let group = flow_group(phase, phases);
        let when = if group == "flow" { "at the end of the run" } else { "before flow.change_at" };
        for wanted in &case.output.fields {
            match wanted {
                OutputField::Velocity => {
                    for (axis, values) in flow.velocity(&case.grid).into_iter().enumerate() {
                        fields.push(FieldData {
                            values: values.into(),
                            ..field(
                                group,
                                ["u", "v", "w"][axis],
                                "m/s",
                                &format!(
                                    "superficial velocity {} {when}, cell-centred",
                                    ["x", "y", "z"][axis]
                                ),
                                &[],
                            )
                        });
                    }
                }
                OutputField::Pressure => fields.push(field(
                    group,
                    "pressure",
                    "Pa",
                    &format!("pressure {when}, cell-centred (zero at the outlet)"),
                    &flow.pressure,
                )),
                OutputField::Concentration => {}
            }
        }
    }
    if snapshots {
        fields.push(field(
            "ligand",
            "concentration",
            "molecules/m^3",
            "ligand concentration at the final time of the transient run, cell-centred (zero inside cells)",
            &state.concentration,
        ));
        fields.push(field(
            "ligand",
            "steady_concentration",
            "molecules/m^3",
            "steady ligand concentration of the final configuration (the field the run approaches)",
            &solution.steady.concentration,
        ));
    }
    let outputs: Vec<OutputTime> = parts
        .iter()
        .map(|p| OutputTime {
            index: p.index,
            time: p.time,
            flow_group: flow_group(phase_at(t, p.time, eps), phases).to_string(),
        })
        .collect();
    let provenance = super::run_provenance(case);

    write_cells_csv(&out_dir.join("cells.csv"), &table)?;
    write_cells_csv(&out_dir.join("cells_timeseries.csv"), &series)?;
    let file = TransientFile {
        grid: &case.grid,
        volume_fraction: &solution.geometry.volume_fraction,
        fields: &fields,
        outputs: &outputs,
        snapshots,
        cells: &table,
        timeseries: &series,
        provenance: &provenance,
        storage: case.output.storage,
    };
    // One hold of HDF5's process-wide lock for the whole file, as `report.rs` does for steady runs: transient
    // cases of a sweep writing at once take turns file by file instead of alternating call by call.
    hdf5::sync::sync(|| {
        write_transient_fields_h5(&out_dir.join("fields.h5"), &file, &mut |i| {
            Ok(read_part(out_dir, &case.sha256, outputs[i].index, cells, field_len)?.concentration)
        })
    })?;
    let has = |f: OutputField| case.output.fields.contains(&f);
    let steps: Vec<TemporalGrid> = outputs
        .iter()
        .map(|o| {
            let mut scalars = vec![("volume_fraction".to_string(), "/grid/volume_fraction".to_string())];
            if snapshots {
                scalars.push(("concentration".into(), format!("/ligand/{}", output_dataset_name(o.index))));
                scalars.push(("steady_concentration".into(), "/ligand/steady_concentration".into()));
            }
            if has(OutputField::Pressure) {
                scalars.push(("pressure".into(), format!("/{}/pressure", o.flow_group)));
            }
            let velocity =
                has(OutputField::Velocity).then(|| ["u", "v", "w"].map(|c| format!("/{}/{c}", o.flow_group)));
            TemporalGrid { time: o.time, scalars, velocity }
        })
        .collect();
    write_temporal_xmf(
        &out_dir.join("fields.xmf"),
        "fields.h5",
        &case.grid,
        &steps,
        case.output.storage.precision,
    )?;

    let summary = run_summary(case, t, run, &parts, &table);
    crate::engine::sensing_outputs::write_sensing_by_position_of(&summary, &table, out_dir)?;
    summary.write(&out_dir.join("summary.json"))?;
    if case.output.figures {
        crate::figures::run_figures::draw_run_figures(out_dir)?;
    }
    Ok(())
}

/// Mean velocity in force at the end of the run (m/s).
fn last_flow_speed(case: &Case, t: &TransientSolve) -> f64 {
    t.flow_change.map_or(case.flow.mean_velocity, |(_, after)| after)
}

fn run_summary(
    case: &Case,
    t: &TransientSolve,
    run: &FinishedRun,
    parts: &[OutputPart],
    table: &CellTable,
) -> RunSummary {
    let (solution, final_part, checkpoints) = (run.solution, run.final_part, run.checkpoints);
    let split = split_summary(case, solution);
    let split_cost = split.as_ref().map(|s| SplitCost {
        setup_s: 0.0,
        solve_s: run.split_seconds,
        seconds_per_right_hand_side: run.split_seconds / s.cells.max(1) as f64,
        transport_s: solution.timing.time_loop - run.split_seconds,
    });
    let state = &solution.state;
    let last_flow = &solution.flows[solution.flows.len() - 1];
    let b = &final_part.balance;
    let has_outlet = case.boundaries.faces.iter().flatten().any(|f| *f == ChamberFace::Outlet);
    let measures = RunMeasures {
        case,
        volume_fraction: &solution.geometry.volume_fraction,
        table,
        final_mean_velocity: last_flow_speed(case, t),
        measured_outlet_concentration: final_part.outlet_concentration,
        warnings: &[
            transient_warnings(case),
            flow_divergence_warnings(case, t, solution),
            split_warnings(solution),
        ]
        .concat(),
    };
    let sections = RunSections {
        resources: run.meter.resources(split_cost),
        flow: FlowSummary {
            model: case.flow.medium.name().to_string(),
            mean_velocity: case.flow.mean_velocity,
            iterations: last_flow.iterations,
            relative_residual: last_flow.relative_residual,
            max_divergence: solution.flows.iter().map(|f| f.max_divergence).fold(0.0, f64::max),
            pressure_drop: last_flow.pressure_drop,
            mode: FlowMode::Transient {
                change: t
                    .flow_change
                    .map(|(time, mean_velocity_after)| FlowChange { time, mean_velocity_after }),
            },
        },
        transport: TransportSummary {
            iterations: state.krylov_iterations,
            mode: TransportMode::Transient { steady_reference_balance_error: solution.steady_balance_error },
        },
        mass_balance: mass_balance(
            [b.secreted, b.outflow, b.uptake, b.decay, b.accumulation, b.relative_error],
            Some((b.stored, state.worst_balance_error)),
        ),
        transient: Some(TransientSummary {
            end_time: t.end_time,
            final_time: state.time,
            stopped_at_steady: state.stopped_at_steady,
            steady_distance: STEADY_DISTANCE,
            stepping: Stepping {
                adaptive: t.adaptive.is_some(),
                error_tolerance: t.adaptive,
                initial_step: t.adaptive.map(|_| t.time_step),
                time_step: t.adaptive.is_none().then_some(t.time_step),
            },
            steps: state.steps,
            rejected_steps: state.rejected_steps,
            checkpoints_written_by_this_process: checkpoints,
            window_start: t.window_start,
            initial_condition: match &t.initial {
                InitialCondition::Zero => "zero".to_string(),
                InitialCondition::Fields(p) => p.display().to_string(),
            },
            steady_outlet_concentration: solution.steady.outlet_concentration,
            time_to_steady: summary::approach(
                &state.crossings,
                has_outlet && solution.steady.outlet_concentration.is_some(),
            ),
            outputs: OutputSeries {
                time: parts.iter().map(|p| p.time).collect(),
                outlet_concentration: parts.iter().map(|p| p.outlet_concentration).collect(),
                stored: parts.iter().map(|p| p.balance.stored).collect(),
                balance_relative_error: parts.iter().map(|p| p.balance.relative_error).collect(),
            },
        }),
        self_neighbour: split,
    };
    RunSummary::build(&measures, sections)
}
