//! Building blocks of the transient verification cases: run a transient case and record what the checks need
//! at the output times.

use mesh::{Grid, Layout};
use solver::linalg::{KrylovParams, MultigridParams};
use solver::problem::{ChamberBoundaries, FlowParameters, LigandParameters};
use solver::solve_case::SteadyCase;
use solver::solve_transient::{
    solve_transient_case, StepReport, TimeStepping, TransientCase, TransientError, TransientObserver,
    TransientOutput, TransientParams, TransientSolution, TransientState,
};

/// What was seen at each output time.
#[derive(Clone, Debug, Default)]
pub struct Recorded {
    pub times: Vec<f64>,
    /// Mean surface concentration of cell 0 (molecules/m³), when there is a cell.
    pub surface: Vec<f64>,
    pub fields: Vec<Vec<f64>>,
    pub worst_balance: f64,
    pub steps: usize,
    pub iterations: usize,
}

pub struct Recorder {
    pub keep_fields: bool,
    pub recorded: Recorded,
}

impl TransientObserver for Recorder {
    fn step(&mut self, _state: &TransientState, report: &StepReport) -> Result<(), String> {
        self.recorded.worst_balance = self.recorded.worst_balance.max(report.balance_error);
        self.recorded.steps += 1;
        self.recorded.iterations += report.iterations;
        Ok(())
    }
    fn output(&mut self, output: &TransientOutput<'_>) -> Result<(), String> {
        self.recorded.times.push(output.time);
        if let Some(s) = output.sensing.first() {
            self.recorded.surface.push(s.mean_surface_concentration);
        }
        if self.keep_fields {
            self.recorded.fields.push(output.concentration.to_vec());
        }
        Ok(())
    }
}

/// A case description for [`run_transient`].
pub struct TransientRun<'a> {
    pub grid: &'a Grid,
    pub layout: &'a Layout,
    pub boundaries: ChamberBoundaries,
    pub flow: FlowParameters,
    pub ligand: LigandParameters,
    pub stepping: TimeStepping,
    pub end_time: f64,
    pub output_times: Vec<f64>,
    pub tolerance: f64,
}

/// Runs the case from `initial` (zero when `None`) and records the outputs.
pub fn run_transient(
    run: &TransientRun,
    initial: Option<Vec<f64>>,
    keep_fields: bool,
) -> Result<(Recorded, TransientSolution), TransientError> {
    let krylov = KrylovParams { relative_tolerance: run.tolerance, max_iterations: 500 };
    let case = TransientCase {
        steady: SteadyCase {
            grid: run.grid,
            layout: run.layout,
            boundaries: run.boundaries,
            flow: run.flow,
            ligand: run.ligand,
            integration_time: 3600.0,
            krylov: krylov.clone(),
        },
        flow_changes: Vec::new(),
        secretion_start: vec![0.0; run.layout.cells.len()],
        params: TransientParams {
            start_time: 0.0,
            end_time: run.end_time,
            stepping: run.stepping,
            output_times: run.output_times.clone(),
            krylov,
            multigrid: MultigridParams::default(),
            window_start: 0.0,
            readable_error: 1.0,
            steady: None,
            stop_at_steady: None,
            switched_on_far_field: true,
            split_cells: Vec::new(),
        },
    };
    let mut recorder = Recorder { keep_fields, recorded: Recorded::default() };
    let solution = solve_transient_case(&case, initial, None, &mut recorder, &mut |_| {})?;
    Ok((recorder.recorded, solution))
}
