//! One transient case end to end: geometry → flow of every phase → steady reference of the final state →
//! time loop. The steady reference (one steady solve, reusing the steady path) gives the values the approach
//! is measured against (times to 90%/99%) and the optional stop at steady state.

use super::integrate::{initial_state, integrate, outlet_concentration, sensed_rates};
use super::{
    FlowPhase, SteadyReference, TransientError, TransientObserver, TransientParams, TransientProblem,
    TransientState,
};
use crate::embedded::FacetStencils;
use crate::flow::FlowField;
use crate::post::{cell_sensing, SensingModel};
use crate::solve_case::{solve_flow, CaseSolveError, Stage, SteadyCase};
use crate::transport::{solve_steady, TransportParams, TransportProblem};
use mesh::EmbeddedGeometry;
use std::time::Instant;

/// A transient case: the steady case (its `flow.mean_velocity` holds from the start), flow changes, per-cell
/// secretion starts and the time-loop parameters.
pub struct TransientCase<'a> {
    pub steady: SteadyCase<'a>,
    /// `(time, new mean velocity)` (s, m/s), sorted by time.
    pub flow_changes: Vec<(f64, f64)>,
    /// Per cell (s).
    pub secretion_start: Vec<f64>,
    /// `steady` and `switched_on_far_field` are filled in here.
    pub params: TransientParams,
}

/// What a transient case produced.
pub struct TransientSolution {
    pub geometry: EmbeddedGeometry,
    /// The flow of every phase, in order.
    pub flows: Vec<FlowField>,
    pub steady: SteadyReference,
    /// Mass-balance relative error of the steady reference solve.
    pub steady_balance_error: f64,
    pub state: TransientState,
    pub params: TransientParams,
    pub timing: TransientTiming,
}

/// Wall-clock seconds of the stages of one transient case.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct TransientTiming {
    pub geometry: f64,
    /// Every flow phase together.
    pub flow: f64,
    pub steady_reference: f64,
    pub time_loop: f64,
}

/// Solves `case` from `initial` (a field, or zero when `None`), or continues `resume`.
pub fn solve_transient_case(
    case: &TransientCase,
    initial: Option<Vec<f64>>,
    resume: Option<TransientState>,
    observer: &mut dyn TransientObserver,
    on_stage: &mut dyn FnMut(Stage),
) -> Result<TransientSolution, TransientError> {
    let s = &case.steady;
    on_stage(Stage::Geometry);
    let t0 = Instant::now();
    let geometry = EmbeddedGeometry::build(s.grid, s.layout, s.boundaries.periodic_axes());
    let stencils = FacetStencils::build(&geometry);
    let t_geometry = t0.elapsed().as_secs_f64();

    on_stage(Stage::Flow);
    let t1 = Instant::now();
    let mut speeds = vec![(case.params.start_time.min(0.0), s.flow.mean_velocity)];
    speeds.extend(case.flow_changes.iter().copied());
    let mut flows = Vec::new();
    for &(_, speed) in &speeds {
        flows.push(solve_flow(&geometry, &stencils, s, speed)?.0);
    }
    let t_flow = t1.elapsed().as_secs_f64();

    let sensing = SensingModel {
        uptake: s.ligand.uptake,
        diffusivity: s.ligand.diffusivity,
        integration_time: s.integration_time,
    };
    let phases: Vec<FlowPhase> = speeds
        .iter()
        .zip(&flows)
        .map(|(&(start, mean_velocity), flow)| FlowPhase { start, face_flux: &flow.face_flux, mean_velocity })
        .collect();
    let problem = TransientProblem {
        geometry: &geometry,
        stencils: &stencils,
        layout: s.layout,
        boundaries: s.boundaries,
        ligand: s.ligand,
        phases,
        secretion_start: case.secretion_start.clone(),
        sensing,
    };

    // Steady reference of the final configuration (last flow, every cell secreting).
    on_stage(Stage::Transport);
    let t2 = Instant::now();
    let last = problem.phases[problem.phases.len() - 1];
    let steady_problem = TransportProblem {
        geometry: &geometry,
        stencils: &stencils,
        layout: s.layout,
        boundaries: s.boundaries,
        ligand: s.ligand,
        face_flux: last.face_flux,
        far_field_speed: last.mean_velocity,
    };
    let params = TransportParams { krylov: s.krylov.clone(), ..TransportParams::default() };
    let steady = solve_steady(&steady_problem, &params).map_err(CaseSolveError::from)?;
    let steady_sensing = cell_sensing(
        &geometry,
        s.layout,
        &steady.assembly.facets,
        &steady.concentration,
        last.face_flux,
        &sensing,
    );
    let reference = SteadyReference {
        sensed_rate: sensed_rates(&problem, &steady_sensing, &steady.assembly.facets),
        outlet_concentration: outlet_concentration(&problem, last.face_flux, &steady.concentration),
        concentration: steady.concentration.clone(),
    };
    let steady_balance_error =
        crate::post::mass_balance(&steady.assembly, &geometry, &steady.concentration).relative_error;
    drop(steady);
    let t_steady = t2.elapsed().as_secs_f64();

    on_stage(Stage::TimeLoop);
    let t3 = Instant::now();
    let mut run_params = case.params.clone();
    run_params.steady = Some(reference.clone());
    run_params.switched_on_far_field = initial.is_none();
    let state = match resume {
        Some(state) => state,
        None => {
            let field = initial.unwrap_or_else(|| vec![0.0; s.grid.len()]);
            initial_state(&problem, &run_params, field)
        }
    };
    let state = integrate(&problem, &run_params, state, observer)?;
    let t_loop = t3.elapsed().as_secs_f64();
    drop(problem);
    Ok(TransientSolution {
        geometry,
        flows,
        steady: reference,
        steady_balance_error,
        state,
        params: run_params,
        timing: TransientTiming {
            geometry: t_geometry,
            flow: t_flow,
            steady_reference: t_steady,
            time_loop: t_loop,
        },
    })
}
