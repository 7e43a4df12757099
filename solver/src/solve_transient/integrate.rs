//! The time loop: variable-step BDF2 on the assembled steady operator, cut at every event and output time,
//! optionally adaptive, with the per-step mass balance, the sensing window and the approach to steady state.

use super::own_fields::{OwnFieldSteps, OwnStep};
use super::state::{Crossings, OwnField, TransientState};
use super::{
    FlowPhase, StepReport, TimeStepping, TransientError, TransientObserver, TransientOutput, TransientParams,
    TransientProblem,
};
use crate::post::decompose::CellSplit;
use crate::post::sensing_window::{becomes_readable_by, cell_rates, ReadableSince, WindowCounts};
use crate::post::{cell_sensing_in_local_flow, local_flow_per_cell, CellSensing};
use crate::problem::{ChamberFace, SurfaceUptake};
use crate::transport::chamber_faces::BoundaryExchange;
use crate::transport::surface_exchange::{released_per_cell, FacetExchange};
use crate::transport::transient::balance::{step_balance, stored_amount, BalanceForms, StepBalance};
use crate::transport::transient::bdf::{
    coefficients, milne_factor, quadratic_extrapolation_weights, MAX_STEP_GROWTH,
};
use crate::transport::transient::far_field_switch_on::SwitchedOnFarField;
use crate::transport::transient::guess_projection::{projected_guess, HistorySpace, GUESS_HISTORY};
use crate::transport::transient::sources::{add_facet_sources, cells_on, switched_exchanges};
use crate::transport::transient::step_solver::StepSolver;
use crate::transport::{assemble_transport, TransportProblem};

/// Everything that stays fixed during one flow phase.
struct PhaseSystem<'a> {
    phase: FlowPhase<'a>,
    solver: StepSolver,
    /// Exchanges with every cell secreting.
    facets: Vec<FacetExchange>,
    /// Non-far-field chamber faces.
    boundary: Vec<BoundaryExchange>,
    decay: Vec<f64>,
    far_field: SwitchedOnFarField,
    /// Right-hand side of the chamber faces (inlet inflow).
    boundary_rhs: Vec<f64>,
    /// Shell-averaged flow around each cell (the phase's flow is fixed).
    local_flow: Vec<[f64; 3]>,
}

impl<'a> PhaseSystem<'a> {
    fn build(problem: &TransientProblem<'a>, phase: FlowPhase<'a>, params: &TransientParams) -> Self {
        let mut without_far_field = problem.boundaries;
        for faces in without_far_field.faces.iter_mut() {
            for face in faces.iter_mut() {
                if *face == ChamberFace::FarField {
                    *face = ChamberFace::Wall;
                }
            }
        }
        let steady_problem = TransportProblem {
            geometry: problem.geometry,
            stencils: problem.stencils,
            layout: problem.layout,
            boundaries: without_far_field,
            ligand: problem.ligand,
            face_flux: phase.face_flux,
            far_field_speed: phase.mean_velocity,
        };
        let assembly = assemble_transport(&steady_problem);
        let far_field = SwitchedOnFarField::build(
            problem.geometry,
            problem.layout,
            &problem.boundaries,
            &problem.ligand,
            phase.face_flux,
            phase.mean_velocity,
            &problem.secretion_start,
        );
        let volume = problem.geometry.grid.cell_volume();
        let fluid_volume: Vec<f64> =
            problem.geometry.volume_fraction.iter().map(|phi| phi * volume).collect();
        let mut boundary_rhs = vec![0.0; fluid_volume.len()];
        for b in &assembly.boundary {
            boundary_rhs[b.grid_cell] += b.inflow_constant;
        }
        let steady_far_field: Vec<(usize, f64)> = far_field.coefficients(None).collect();
        let solver =
            StepSolver::new(assembly.system, fluid_volume, steady_far_field, params.multigrid.clone());
        PhaseSystem {
            phase,
            solver,
            facets: assembly.facets,
            boundary: assembly.boundary,
            decay: assembly.decay,
            far_field,
            boundary_rhs,
            local_flow: local_flow_per_cell(problem.geometry, problem.layout, phase.face_flux),
        }
    }
}

/// Per-cell geometry the sensing rates need.
struct CellGeometry {
    radius: Vec<f64>,
    area: Vec<f64>,
}

/// Flux-weighted concentration leaving through the outlet faces (molecules/m³), if anything leaves there.
pub fn outlet_concentration(problem: &TransientProblem, face_flux: &[Vec<f64>; 3], c: &[f64]) -> Option<f64> {
    let grid = &problem.geometry.grid;
    let (mut flux, mut carried) = (0.0, 0.0);
    for axis in mesh::Axis::ALL {
        let a = axis.index();
        let (b, d) = ((a + 1) % 3, (a + 2) % 3);
        for side in 0..2 {
            if problem.boundaries.faces[a][side] != ChamberFace::Outlet {
                continue;
            }
            let outward = if side == 0 { -1.0 } else { 1.0 };
            for v in 0..grid.shape[d] {
                for u in 0..grid.shape[b] {
                    let mut cell = [0usize; 3];
                    cell[a] = if side == 0 { 0 } else { grid.shape[a] - 1 };
                    cell[b] = u;
                    cell[d] = v;
                    let mut face = cell;
                    face[a] = if side == 0 { 0 } else { grid.shape[a] };
                    let q = outward * face_flux[a][grid.face_index(axis, face[0], face[1], face[2])];
                    if q > 0.0 {
                        flux += q;
                        carried += q * c[grid.index(cell[0], cell[1], cell[2])];
                    }
                }
            }
        }
    }
    (flux > 0.0).then(|| carried / flux)
}

/// The initial state of a run starting at `start_time` from `initial` (one value per grid cell).
pub fn initial_state(
    problem: &TransientProblem,
    params: &TransientParams,
    initial: Vec<f64>,
) -> TransientState {
    let cells = problem.layout.cells.len();
    let first_step = match params.stepping {
        TimeStepping::Fixed { step } => step,
        TimeStepping::Adaptive { initial_step, .. } => initial_step,
    };
    TransientState {
        time: params.start_time,
        steps: 0,
        rejected_steps: 0,
        krylov_iterations: 0,
        concentration: initial,
        previous: Vec::new(),
        next_step: first_step,
        counts: WindowCounts::new(cells),
        last_rates: Vec::new(),
        crossings: Crossings::new(cells),
        readable: ReadableSince::new(cells),
        outputs_done: 0,
        worst_balance_error: 0.0,
        stopped_at_steady: false,
        own_fields: params
            .split_cells
            .iter()
            .map(|&c| OwnField::zero(c, problem.geometry.grid.len()))
            .collect(),
    }
}

/// The times at which a step must end — events (secretion starts, flow changes), output times, the window start
/// and the end time — and the events among them, which restart the BDF history.
struct Marks {
    ends: Vec<f64>,
    restarts: Vec<f64>,
    /// The last event up to the end time (a stop at steady state waits for it).
    last_event: f64,
    /// Times closer than this are one time.
    eps: f64,
}

impl Marks {
    fn plan(problem: &TransientProblem, params: &TransientParams) -> Self {
        let mut restarts: Vec<f64> = problem.secretion_start.to_vec();
        restarts.extend(problem.phases.iter().skip(1).map(|p| p.start));
        let mut ends: Vec<f64> = restarts.clone();
        ends.extend(params.output_times.iter().copied());
        ends.push(params.window_start);
        ends.push(params.end_time);
        ends.retain(|&t| t > params.start_time && t <= params.end_time);
        ends.sort_by(f64::total_cmp);
        ends.dedup();
        let last_event =
            restarts.iter().copied().filter(|&t| t <= params.end_time).fold(params.start_time, f64::max);
        let eps = 1e-9 * (params.end_time - params.start_time).abs().max(f64::MIN_POSITIVE);
        Marks { ends, restarts, last_event, eps }
    }

    /// The first mark after `t` (the end time when none is left).
    fn next_after(&self, t: f64, end_time: f64) -> f64 {
        self.ends.iter().copied().find(|&m| m > t + self.eps).unwrap_or(end_time)
    }

    fn restarts_at(&self, t: f64) -> bool {
        self.restarts.iter().any(|&e| (e - t).abs() <= self.eps)
    }

    /// Where a step of size `dt` from `t` ends: on the next mark when it would reach it (adaptive: the remainder
    /// split evenly rather than a sliver left).
    fn step_end(&self, t: f64, dt: f64, next_mark: f64, adaptive: bool) -> Result<f64, TransientError> {
        let mut t_new = t + dt;
        if t_new >= next_mark - self.eps {
            t_new = next_mark;
        } else if adaptive && next_mark - t_new < 0.5 * dt {
            t_new = t + 0.5 * (next_mark - t);
        }
        let h = t_new - t;
        if h <= self.eps * 1e-3 {
            return Err(TransientError::StepTooSmall { time: t, step: h });
        }
        Ok(t_new)
    }
}

/// A solved step from `state.time` to `t_new`, not yet accepted.
struct SolvedStep {
    t_new: f64,
    h: f64,
    /// BDF coefficients α₀, α₁, α₂.
    alpha: [f64; 3],
    /// Second order: the step used the solution before the current one.
    with_history: bool,
    /// Far-field coefficients of the step.
    far_field: Vec<(usize, f64)>,
    c_new: Vec<f64>,
    iterations: usize,
}

/// The step-size controller's verdict.
enum StepControl {
    /// Keep the step; the next one is `factor` times longer (before the caps of the stepping).
    Accept { factor: f64 },
    /// Retry from the same time with this step.
    Reject { dt: f64 },
}

/// What the time loop carries from step to step besides the run's state: the flow phase's system, the sources
/// in force, and grid-sized vectors reused from step to step (a fresh 16 MB vector at 128³ costs thousands of
/// page faults).
struct Stepper<'a, 'p> {
    problem: &'p TransientProblem<'a>,
    params: &'p TransientParams,
    phase_index: usize,
    system: PhaseSystem<'a>,
    on: Vec<bool>,
    facets_now: Vec<FacetExchange>,
    cell_geometry: CellGeometry,
    rhs: Vec<f64>,
    spare: Vec<Vec<f64>>,
    base_products: BaseProducts,
    stored: StoredAmounts,
    own: OwnFieldSteps,
}

/// Integrates from `state` to `params.end_time` (or to steady state), telling `observer` about every
/// accepted step and output time.
pub fn integrate(
    problem: &TransientProblem,
    params: &TransientParams,
    mut state: TransientState,
    observer: &mut dyn TransientObserver,
) -> Result<TransientState, TransientError> {
    let n = problem.geometry.grid.len();
    if state.concentration.len() != n {
        return Err(TransientError::InitialLength { found: state.concentration.len(), expected: n });
    }
    let cells = problem.layout.cells.len();
    let own_cells: Vec<usize> = state.own_fields.iter().map(|o| o.cell).collect();
    if own_cells != params.split_cells || own_cells.iter().any(|&c| c >= cells) {
        return Err(TransientError::SplitCells { found: own_cells, expected: params.split_cells.clone() });
    }
    let marks = Marks::plan(problem, params);
    let mut stepper = Stepper::start(problem, params, &mut state);
    let eps = marks.eps;
    let adaptive = matches!(params.stepping, TimeStepping::Adaptive { .. });
    while state.time < params.end_time - eps && !state.stopped_at_steady {
        let t = state.time;
        let next_mark = marks.next_after(t, params.end_time);
        let mut dt = state.next_step;
        loop {
            let t_new = marks.step_end(t, dt, next_mark, adaptive)?;
            let step = stepper.advance(&state, t_new)?;
            match control_step(params, &mut state, &step) {
                StepControl::Accept { factor } => {
                    stepper.accept(&mut state, step, factor, &marks, observer)?;
                    break;
                }
                StepControl::Reject { dt: retry } => {
                    dt = retry;
                    stepper.spare.push(step.c_new);
                }
            }
        }
    }
    Ok(state)
}

impl<'a, 'p> Stepper<'a, 'p> {
    /// The system of the phase in force just after the state's time, and the sensed rates at that time.
    fn start(
        problem: &'p TransientProblem<'a>,
        params: &'p TransientParams,
        state: &mut TransientState,
    ) -> Self {
        let cells = problem.layout.cells.len();
        let geometry = problem.geometry;
        let mut area = vec![0.0; cells];
        for f in &geometry.facets {
            area[f.owner] += f.area;
        }
        let cell_geometry =
            CellGeometry { radius: problem.layout.cells.iter().map(|c| c.radius).collect(), area };
        let phase_index = phase_at(problem, state.time);
        let system = PhaseSystem::build(problem, problem.phases[phase_index], params);
        let on = cells_on(&problem.secretion_start, state.time);
        let facets_now = switched_exchanges(geometry, &system.facets, &on);
        let n = geometry.grid.len();
        let stepper = Stepper {
            problem,
            params,
            phase_index,
            system,
            on,
            facets_now,
            cell_geometry,
            rhs: vec![0.0; n],
            spare: Vec::new(),
            base_products: BaseProducts::default(),
            stored: StoredAmounts::default(),
            own: OwnFieldSteps::new(geometry, cells),
        };
        // Rates at the start (or resume) time.
        if state.last_rates.is_empty() {
            let sensing = sense(problem, &stepper.system, &stepper.facets_now, &state.concentration);
            state.last_rates = stepper.rates(&sensing);
        }
        stepper
    }

    /// Per-cell counting rates of a sensed field under the sources in force.
    fn rates(&self, sensing: &[CellSensing]) -> Vec<[f64; 3]> {
        let cells = self.problem.layout.cells.len();
        cell_rates(
            sensing,
            self.problem.ligand.uptake,
            self.problem.ligand.diffusivity,
            &self.cell_geometry.radius,
            &self.cell_geometry.area,
            &released_per_cell(self.problem.geometry, &self.facets_now, cells),
        )
    }

    /// Flow phase and secreting cells of the step ending at `t_new` (the phase in force at its middle).
    fn switch_to(&mut self, t_new: f64, h: f64) {
        let (problem, geometry) = (self.problem, self.problem.geometry);
        let new_phase = phase_at(problem, t_new - 0.5 * h);
        if new_phase != self.phase_index {
            self.phase_index = new_phase;
            self.system = PhaseSystem::build(problem, problem.phases[new_phase], self.params);
            self.base_products.clear(&mut self.spare);
            self.facets_now = switched_exchanges(geometry, &self.system.facets, &self.on);
        }
        let on_new = cells_on(&problem.secretion_start, t_new);
        if on_new != self.on {
            self.on = on_new;
            self.facets_now = switched_exchanges(geometry, &self.system.facets, &self.on);
        }
    }

    /// Solves the step from `state.time` to `t_new`: BDF order and coefficients, the step's operator and
    /// right-hand side, the projected guess, the solve.
    fn advance(&mut self, state: &TransientState, t_new: f64) -> Result<SolvedStep, TransientError> {
        let (problem, params) = (self.problem, self.params);
        let t = state.time;
        let h = t_new - t;
        self.switch_to(t_new, h);

        // BDF order: first order without history or after a large jump in step size.
        let previous_step = state.previous.first().map(|(tp, _)| t - tp);
        let previous_step = previous_step.filter(|&p| h / p <= MAX_STEP_GROWTH * 1.0001);
        let alpha = coefficients(h, previous_step);
        let history_c1 = previous_step.and(state.previous.first().map(|(_, c)| c.as_slice()));
        let sigma = alpha[0] / h;

        let time = params.switched_on_far_field.then_some(t_new);
        let far_field: Vec<(usize, f64)> = self.system.far_field.coefficients(time).collect();
        self.system.solver.set_step(sigma, far_field.iter().copied());

        // Right-hand side: chamber faces + sources + history.
        let rhs = &mut self.rhs;
        rhs.copy_from_slice(&self.system.boundary_rhs);
        add_facet_sources(problem.geometry, &self.facets_now, rhs);
        let forcing_norm = rhs.iter().map(|v| v * v).sum::<f64>().sqrt();
        let volume = self.system.solver.fluid_volume();
        for (p, r) in rhs.iter_mut().enumerate() {
            let mut past = -alpha[1] * state.concentration[p];
            if let Some(c1) = history_c1 {
                past -= alpha[2] * c1[p];
            }
            *r += volume[p] * past / h;
        }
        let scale =
            if forcing_norm > 0.0 { forcing_norm } else { rhs.iter().map(|v| v * v).sum::<f64>().sqrt() };
        let target = params.krylov.relative_tolerance * scale;

        // Initial guess: the best combination of the history (see `guess_projection`).
        let n = self.rhs.len();
        let mut c_new = self.spare.pop().unwrap_or_else(|| vec![0.0; n]);
        self.base_products.update(&mut self.system.solver, state, &mut self.spare);
        initial_guess(
            &self.system.solver,
            state,
            &self.base_products,
            t_new,
            history_c1.is_some(),
            &self.rhs,
            &mut c_new,
        );
        let iterations = self.solve_step(&mut c_new, target, t_new)?;
        Ok(SolvedStep { t_new, h, alpha, with_history: history_c1.is_some(), far_field, c_new, iterations })
    }

    /// Solves the step system for `c` (the guess on entry) to the absolute residual `target`; the fitted flux
    /// keeps the system linear, so one solve suffices. Returns the Krylov iterations.
    fn solve_step(&mut self, c_new: &mut [f64], target: f64, t_new: f64) -> Result<usize, TransientError> {
        let iterations = self
            .system
            .solver
            .solve(&self.rhs, c_new, target, self.params.krylov.max_iterations)
            .map_err(|source| TransientError::Solve { time: t_new, source })?
            .iterations;
        if c_new.iter().any(|v| !v.is_finite()) {
            return Err(TransientError::NonFinite { time: t_new });
        }
        Ok(iterations)
    }

    /// Accepts a solved step: its molecule balance, the sensing window, the approach to steady state, the
    /// history shift, then the observer (and an output when the step ends on one).
    fn accept(
        &mut self,
        state: &mut TransientState,
        step: SolvedStep,
        factor: f64,
        marks: &Marks,
        observer: &mut dyn TransientObserver,
    ) -> Result<(), TransientError> {
        let (problem, params) = (self.problem, self.params);
        let SolvedStep { t_new, h, alpha, with_history, far_field, c_new, iterations } = step;
        let t = state.time;
        let eps = marks.eps;
        let history_c1 = with_history.then(|| state.previous[0].1.as_slice());
        let balance_forms = BalanceForms {
            facets: &self.facets_now,
            boundary: &self.system.boundary,
            far_field: &far_field,
            decay: &self.system.decay,
            fluid_volume: self.system.solver.fluid_volume(),
        };
        let volume = self.system.solver.fluid_volume();
        let history_stored = [
            Some(self.stored.amount(volume, state.time, &state.concentration)),
            history_c1.map(|c1| self.stored.amount(volume, state.previous[0].0, c1)),
        ];
        let balance = step_balance(&balance_forms, &c_new, history_stored, alpha, h);
        self.stored.remember(t_new, balance.stored);
        let sensing = sense(problem, &self.system, &self.facets_now, &c_new);
        let rates = self.rates(&sensing);
        if t >= params.window_start - eps {
            let before: Vec<f64> = state.counts.contrast_and_error().iter().map(|w| w.1).collect();
            state.counts.add_step(&state.last_rates, &rates, h);
            let after: Vec<f64> = state.counts.contrast_and_error().iter().map(|w| w.1).collect();
            state.readable.update(t, t_new, &before, &after, params.readable_error);
        }
        let outlet = outlet_concentration(problem, self.system.phase.face_flux, &c_new);
        let mut distance = None;
        if let Some(steady) = &params.steady {
            let sensed: Vec<f64> = rates.iter().map(|r| r[1] + r[2]).collect();
            let before: Vec<f64> = state.last_rates.iter().map(|r| r[1] + r[2]).collect();
            state.crossings.update(
                t,
                t_new,
                &before,
                &sensed,
                &steady.sensed_rate,
                outlet,
                steady.outlet_concentration,
            );
            distance = Some(relative_change(&steady.concentration, &c_new));
        }

        let restart = marks.restarts_at(t_new);
        let own_step = OwnStep {
            facets: &self.facets_now,
            t,
            t_new,
            alpha,
            t_previous: with_history.then(|| state.previous[0].0),
            restart,
            krylov: &params.krylov,
        };
        let mut split_seconds =
            self.own.advance(problem.geometry, &mut self.system.solver, &own_step, &mut state.own_fields);

        let order = if with_history { 2 } else { 1 };
        // Shift the history.
        let old = std::mem::replace(&mut state.concentration, c_new);
        state.previous.insert(0, (t, old));
        // Earlier solutions: the adaptive error estimate and the quadratic extrapolation use two, the guess
        // projection all of them.
        let keep = GUESS_HISTORY - 1;
        self.spare.extend(state.previous.drain(keep.min(state.previous.len())..).map(|(_, c)| c));
        state.time = t_new;
        state.steps += 1;
        state.krylov_iterations += iterations;
        state.worst_balance_error = state.worst_balance_error.max(balance.relative_error);
        state.last_rates = rates;
        state.next_step = match params.stepping {
            TimeStepping::Fixed { step } => step,
            TimeStepping::Adaptive { .. } => h * factor,
        };
        // Events restart the history (the next step is first order).
        if restart {
            self.spare.extend(state.previous.drain(..).map(|(_, c)| c));
        }
        let at_output = params.output_times.iter().any(|&o| (o - t_new).abs() <= eps);
        let mut held_for_readable = 0;
        if let (Some(tol), Some(d)) = (params.stop_at_steady, distance) {
            if t_new >= marks.last_event - eps && d <= tol {
                held_for_readable = still_approaching_readable(params, state);
                state.stopped_at_steady = held_for_readable == 0;
            }
        }
        let emits = at_output || state.stopped_at_steady || state.time >= params.end_time - eps;
        let splits = if emits && !state.own_fields.is_empty() {
            let started = std::time::Instant::now();
            let splits = self.own.splits(
                problem.geometry,
                &self.facets_now,
                problem.ligand.uptake,
                &sensing,
                &state.own_fields,
                &state.concentration,
            );
            split_seconds += started.elapsed().as_secs_f64();
            splits
        } else {
            Vec::new()
        };
        let report = StepReport {
            split_seconds,
            time: t_new,
            step_size: h,
            order,
            iterations,
            balance_error: balance.relative_error,
            distance_to_steady: distance,
            held_for_readable,
        };
        observer.step(state, &report).map_err(TransientError::Observer)?;
        if emits {
            emit(state, observer, &sensing, &splits, balance, outlet, at_output)?;
        }
        Ok(())
    }
}

/// Cells not yet readable whose window error reaches `readable_error` before the end time at the rates of
/// `state` (at steady state these rates hold, so the prediction is the run's own future).
fn still_approaching_readable(params: &TransientParams, state: &TransientState) -> usize {
    let from = state.time.max(params.window_start);
    (0..state.readable.since.len())
        .filter(|&i| {
            state.readable.since[i].is_none()
                && becomes_readable_by(
                    (state.counts.front[i], state.counts.back[i]),
                    &state.last_rates[i],
                    from,
                    params.end_time,
                    params.readable_error,
                )
        })
        .count()
}

/// The phase in force at `t`.
fn phase_at(problem: &TransientProblem, t: f64) -> usize {
    problem.phases.iter().rposition(|p| p.start <= t).unwrap_or(0)
}

/// Step-size control from the embedded error estimate (adaptive stepping at BDF2 with two earlier solutions):
/// the difference between the step's solution and the quadratic extrapolation of the last three, scaled by
/// Milne's factor, against `tolerance · max |c|`. A rejected step is counted in the state.
fn control_step(params: &TransientParams, state: &mut TransientState, step: &SolvedStep) -> StepControl {
    let mut factor = MAX_STEP_GROWTH;
    let TimeStepping::Adaptive { tolerance, max_step, .. } = params.stepping else {
        return StepControl::Accept { factor };
    };
    let (h, c_new) = (step.h, &step.c_new);
    if step.with_history && state.previous.len() >= 2 {
        let t = state.time;
        let (t1, c1) = &state.previous[0];
        let (t2, c2) = &state.previous[1];
        let steps = [h, t - t1, t1 - t2];
        let w = quadratic_extrapolation_weights(steps);
        let k = milne_factor(steps);
        let peak = c_new.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let mut worst = 0.0f64;
        for p in 0..c_new.len() {
            let predicted = w[0] * state.concentration[p] + w[1] * c1[p] + w[2] * c2[p];
            worst = worst.max((c_new[p] - predicted).abs());
        }
        let error = if peak > 0.0 { k * worst / (tolerance * peak) } else { 0.0 };
        factor = (0.9 * error.max(1e-10).powf(-1.0 / 3.0)).clamp(0.2, MAX_STEP_GROWTH);
        if error > 1.0 {
            state.rejected_steps += 1;
            return StepControl::Reject { dt: h * factor.min(0.9) };
        }
    }
    StepControl::Accept { factor: factor.min(max_step / h) }
}

/// Tells the observer about an output time. A final state that is not a regular output time (early stop, end
/// time off the output grid) is emitted as well, once.
fn emit(
    state: &mut TransientState,
    observer: &mut dyn TransientObserver,
    sensing: &[CellSensing],
    splits: &[CellSplit],
    balance: StepBalance,
    outlet: Option<f64>,
    regular: bool,
) -> Result<(), TransientError> {
    let output = TransientOutput {
        index: state.outputs_done,
        time: state.time,
        regular,
        concentration: &state.concentration,
        sensing,
        splits,
        counts: &state.counts,
        balance,
        outlet_concentration: outlet,
    };
    observer.output(&output).map_err(TransientError::Observer)?;
    state.outputs_done += 1;
    Ok(())
}

fn sense(
    problem: &TransientProblem,
    system: &PhaseSystem,
    facets: &[FacetExchange],
    c: &[f64],
) -> Vec<CellSensing> {
    cell_sensing_in_local_flow(
        problem.geometry,
        problem.layout,
        facets,
        c,
        &system.local_flow,
        &problem.sensing,
    )
}

/// Weights of cⁿ, cⁿ⁻¹, cⁿ⁻² extrapolating to `t_new`: quadratic from three solutions (error O(Δt³)), linear from
/// two, or cⁿ alone.
fn extrapolation_weights(state: &TransientState, t_new: f64, with_history: bool) -> Vec<f64> {
    match state.previous.as_slice() {
        [(t1, _), (t2, _), ..] if with_history => {
            quadratic_extrapolation_weights([t_new - state.time, state.time - t1, t1 - t2]).to_vec()
        }
        [(t1, _), ..] if with_history => {
            let w = (t_new - state.time) / (state.time - t1);
            vec![1.0 + w, -w]
        }
        _ => vec![1.0],
    }
}

/// The history solutions cⁿ, cⁿ⁻¹, … used by the guess, newest first, with their times.
fn history(state: &TransientState) -> impl Iterator<Item = (f64, &[f64])> {
    std::iter::once((state.time, state.concentration.as_slice()))
        .chain(state.previous.iter().map(|(t, c)| (*t, c.as_slice())))
        .take(GUESS_HISTORY)
}

/// `A₀ c` of the history solutions, by the solution's time, within one flow phase. A run resumed from a
/// checkpoint recomputes them from the stored solutions with the same function, so its guesses repeat the
/// uninterrupted run's bit for bit.
#[derive(Default)]
struct BaseProducts {
    entries: Vec<(u64, Vec<f64>)>,
}

impl BaseProducts {
    fn clear(&mut self, spare: &mut Vec<Vec<f64>>) {
        spare.extend(self.entries.drain(..).map(|(_, v)| v));
    }

    /// Keeps the products of the current history, computing the missing ones (one per step in a steady run).
    fn update(&mut self, solver: &mut StepSolver, state: &TransientState, spare: &mut Vec<Vec<f64>>) {
        let wanted: Vec<u64> = history(state).map(|(t, _)| t.to_bits()).collect();
        let mut kept = Vec::with_capacity(wanted.len());
        for (key, c) in history(state) {
            let key = key.to_bits();
            match self.entries.iter().position(|(k, _)| *k == key) {
                Some(pos) => kept.push(self.entries.swap_remove(pos)),
                None => {
                    let mut product = spare.pop().unwrap_or_else(|| vec![0.0; c.len()]);
                    solver.apply_base(c, &mut product);
                    kept.push((key, product));
                }
            }
        }
        debug_assert_eq!(kept.len(), wanted.len());
        self.clear(spare);
        self.entries = kept;
    }
}

/// Amounts stored in the recent solutions, by time, so that a step's balance does not sum the history again. A
/// resumed run recomputes them with the same function ([`stored_amount`]), bit for bit.
#[derive(Default)]
struct StoredAmounts {
    entries: Vec<(u64, f64)>,
}

impl StoredAmounts {
    fn amount(&mut self, fluid_volume: &[f64], time: f64, c: &[f64]) -> f64 {
        match self.entries.iter().find(|(t, _)| *t == time.to_bits()) {
            Some(&(_, amount)) => amount,
            None => {
                let amount = stored_amount(fluid_volume, c);
                self.remember(time, amount);
                amount
            }
        }
    }

    fn remember(&mut self, time: f64, amount: f64) {
        self.entries.retain(|(t, _)| *t != time.to_bits());
        self.entries.insert(0, (time.to_bits(), amount));
        self.entries.truncate(3);
    }
}

/// Guess for cⁿ⁺¹ into `guess`: the extrapolation of the history, improved by the minimal-residual projection
/// on the history when there are at least two solutions.
fn initial_guess(
    solver: &StepSolver,
    state: &TransientState,
    products: &BaseProducts,
    t_new: f64,
    with_history: bool,
    rhs: &[f64],
    guess: &mut [f64],
) {
    let anchor = extrapolation_weights(state, t_new, with_history);
    let solutions: Vec<&[f64]> = history(state).map(|(_, c)| c).collect();
    if solutions.len() < 2 || products.entries.len() != solutions.len() {
        guess.copy_from_slice(&state.concentration);
        return;
    }
    let base_products: Vec<&[f64]> = products.entries.iter().map(|(_, v)| v.as_slice()).collect();
    let space = HistorySpace {
        solutions: &solutions,
        base_products: &base_products,
        step_diagonal: solver.step_diagonal(),
        base_diagonal: solver.base_diagonal(),
    };
    projected_guess(&space, &anchor, rhs, guess);
}

/// `‖a − b‖ / ‖a‖` (zero when both vanish).
pub fn relative_change(reference: &[f64], value: &[f64]) -> f64 {
    let num: f64 = reference.iter().zip(value).map(|(x, y)| (x - y) * (x - y)).sum();
    let den: f64 = reference.iter().map(|y| y * y).sum();
    if den == 0.0 {
        num.sqrt()
    } else {
        (num / den).sqrt()
    }
}

/// The sensed rate that [`cell_rates`] counts, for a steady field (for the approach-to-steady times).
pub fn sensed_rates(
    problem: &TransientProblem,
    sensing: &[CellSensing],
    facets: &[FacetExchange],
) -> Vec<f64> {
    let cells = problem.layout.cells.len();
    let mut area = vec![0.0; cells];
    for f in &problem.geometry.facets {
        area[f.owner] += f.area;
    }
    let radius: Vec<f64> = problem.layout.cells.iter().map(|c| c.radius).collect();
    let released = released_per_cell(problem.geometry, facets, cells);
    let uptake: SurfaceUptake = problem.ligand.uptake;
    cell_rates(sensing, uptake, problem.ligand.diffusivity, &radius, &area, &released)
        .iter()
        .map(|r| r[1] + r[2])
        .collect()
}
