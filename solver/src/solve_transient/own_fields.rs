//! The self/neighbour split of a transient run. Each step solves the linear system `(σM + A(t)) c = r`, whose
//! operator is the same for every source, so the field of one cell's secretion alone obeys the same steps,
//!
//! ```text
//! (σM + A(t)) c_i^{n+1} = b_i(t_{n+1}) − M (α₁ c_i^n + α₂ c_i^{n−1}) / Δt,   c_i(t₀) = 0,
//! ```
//!
//! and the rest (other cells, inlet, and an initial field read from a file) is total − own. Each chosen cell
//! therefore costs one more solve per accepted step, on the step solver of the total (same diagonal, same
//! multigrid hierarchy), with the same BDF coefficients and history depth; rejected steps of an adaptive run
//! cost nothing extra. The per-cell split at an output time is [`crate::post::decompose::split_cell`], as in a
//! steady run. A solve that fails marks that cell's field as failed (its split is left out from then on); the
//! total and the other cells go on.

use std::time::Instant;

use super::state::OwnField;
use crate::linalg::{KrylovParams, SolveError};
use crate::post::decompose::{facets_by_owner, split_cell, CellSplit, SurfaceForms};
use crate::post::CellSensing;
use crate::problem::SurfaceUptake;
use crate::transport::surface_exchange::FacetExchange;
use crate::transport::transient::step_solver::StepSolver;
use mesh::EmbeddedGeometry;

/// One accepted step as the own fields see it.
pub(super) struct OwnStep<'s> {
    /// The exchanges in force during the step (cells not yet secreting are silent).
    pub facets: &'s [FacetExchange],
    pub t: f64,
    pub t_new: f64,
    /// BDF coefficients α₀, α₁, α₂ of the total's step.
    pub alpha: [f64; 3],
    /// The total's step used its previous solution (second order) from time `t_previous`.
    pub t_previous: Option<f64>,
    /// An event at `t_new` restarts the history (the next step is first order).
    pub restart: bool,
    pub krylov: &'s KrylovParams,
}

/// Work of the own-field steps: the chosen cells' facets and a right-hand side reused from step to step.
pub(super) struct OwnFieldSteps {
    by_owner: Vec<Vec<usize>>,
    rhs: Vec<f64>,
    guess: Vec<f64>,
}

impl OwnFieldSteps {
    pub fn new(geometry: &EmbeddedGeometry, cells: usize) -> Self {
        OwnFieldSteps { by_owner: facets_by_owner(geometry, cells), rhs: Vec::new(), guess: Vec::new() }
    }

    /// Advances every own field that has not failed over `step` with `solver` (set to the step's diagonal)
    /// and shifts its history as the total's. Returns the wall seconds spent.
    pub fn advance(
        &mut self,
        geometry: &EmbeddedGeometry,
        solver: &mut StepSolver,
        step: &OwnStep,
        own_fields: &mut [OwnField],
    ) -> f64 {
        if own_fields.is_empty() {
            return 0.0;
        }
        let started = Instant::now();
        let n = solver.len();
        let h = step.t_new - step.t;
        let alpha = step.alpha;
        for own in own_fields.iter_mut().filter(|o| o.failed.is_none()) {
            let history = step.t_previous.filter(|_| !own.previous.is_empty());
            self.rhs.clear();
            self.rhs.resize(n, 0.0);
            for &f in &self.by_owner[own.cell] {
                let ex = &step.facets[f];
                self.rhs[geometry.facets[f].grid_cell] += ex.secretion - ex.uptake.constant;
            }
            let forcing_norm = norm(&self.rhs);
            let volume = solver.fluid_volume();
            for (p, r) in self.rhs.iter_mut().enumerate() {
                let mut past = -alpha[1] * own.concentration[p];
                if history.is_some() {
                    past -= alpha[2] * own.previous[p];
                }
                *r += volume[p] * past / h;
            }
            let scale = if forcing_norm > 0.0 { forcing_norm } else { norm(&self.rhs) };
            let target = step.krylov.relative_tolerance * scale;
            // Guess: the linear extrapolation of the own history (the field itself after an event).
            self.guess.clear();
            match history {
                Some(t_previous) => {
                    let w = h / (step.t - t_previous);
                    self.guess.extend(
                        own.concentration.iter().zip(&own.previous).map(|(c, c1)| (1.0 + w) * c - w * c1),
                    );
                }
                None => self.guess.extend_from_slice(&own.concentration),
            }
            match solver.solve(&self.rhs, &mut self.guess, target, step.krylov.max_iterations) {
                Ok(info) if self.guess.iter().all(|v| v.is_finite()) => {
                    own.iterations += info.iterations;
                    let old = std::mem::replace(&mut own.concentration, std::mem::take(&mut self.guess));
                    // The vector that leaves the history is the next guess's buffer.
                    self.guess = if step.restart {
                        own.previous.clear();
                        old
                    } else {
                        std::mem::replace(&mut own.previous, old)
                    };
                }
                outcome => {
                    let residual = match outcome {
                        Err(SolveError::NoConvergence { relative_residual, .. }) => relative_residual,
                        _ => f64::NAN,
                    };
                    own.failed = Some((step.t_new, residual));
                    own.concentration = Vec::new();
                    own.previous = Vec::new();
                }
            }
        }
        started.elapsed().as_secs_f64()
    }

    /// The split of every cell whose own field is intact, from the total field `total` and the sensing of that
    /// field (its local flow directions).
    pub fn splits(
        &self,
        geometry: &EmbeddedGeometry,
        facets: &[FacetExchange],
        uptake: SurfaceUptake,
        sensing: &[CellSensing],
        own_fields: &[OwnField],
        total: &[f64],
    ) -> Vec<CellSplit> {
        let forms = SurfaceForms { geometry, exchanges: facets, uptake };
        own_fields
            .iter()
            .filter(|o| o.failed.is_none())
            .map(|own| {
                let direction = sensing[own.cell].local_flow_direction;
                let split = split_cell(
                    forms,
                    own.cell,
                    &self.by_owner[own.cell],
                    direction,
                    &own.concentration,
                    total,
                );
                CellSplit { iterations: own.iterations, ..split }
            })
            .collect()
    }
}

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}
