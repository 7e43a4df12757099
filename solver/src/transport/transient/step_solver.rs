//! The linear solve of one implicit step: `(σ M + A(t)) c = r`, with σ = α₀/Δt the storage coefficient and A(t)
//! the steady transport operator whose far-field faces change in time.
//!
//! The product uses the exact operator of the step. The multigrid preconditioner is built once per *rung* of a
//! ladder of storage coefficients (σ rounded to a power of √2) with the steady far-field coefficients, and is
//! reused for every step whose σ falls on that rung: fixed stepping therefore builds two hierarchies (BDF1 and
//! BDF2), and the preconditioner of a step depends on σ alone — so a run resumed from a checkpoint repeats the
//! uninterrupted run's arithmetic exactly. The Krylov solve starts from the projected guess and stops at the
//! absolute residual `tol · ‖forcing‖` that a steady solve of the same case reaches.

use crate::linalg::apply_operator::decouple_inactive_cells;
use crate::linalg::multigrid::{Multigrid, MultigridWork};
use crate::linalg::sparse_correction::apply_corrected;
use crate::linalg::{
    bicgstab, BicgstabParams, BicgstabWork, KrylovParams, LinearSystem, MultigridParams, RightHandSide,
    SolveError, SolveInfo, SparseCorrection,
};

/// Hierarchies kept at most (least recently built dropped first).
const MAX_HIERARCHIES: usize = 4;

struct Rung {
    index: i32,
    multigrid: Multigrid,
    work: MultigridWork,
}

/// Step solver of one flow phase.
pub struct StepSolver {
    /// The operator (the preconditioner is built from it); its sparse correction lives in `correction`.
    system: LinearSystem,
    correction: SparseCorrection,
    /// Diagonal without storage and far field: decay, other chamber faces, surface uptake.
    base_sink: Vec<f64>,
    /// Fluid volume φh³ of each grid cell (m³), zero where inactive.
    fluid_volume: Vec<f64>,
    /// Steady far-field coefficients (the preconditioner's boundary rows).
    steady_far_field: Vec<(usize, f64)>,
    multigrid: MultigridParams,
    rungs: Vec<Rung>,
    /// Krylov work vectors, kept from step to step.
    krylov: BicgstabWork,
    /// Hierarchies built so far (for the report).
    pub hierarchies_built: usize,
}

/// Rung of the ladder for storage coefficient σ (1/s): round(2 log₂ σ).
fn rung_of(sigma: f64) -> i32 {
    (2.0 * sigma.log2()).round() as i32
}

impl StepSolver {
    /// `system`: the assembled steady operator *without* far-field terms; `fluid_volume`: φh³ per grid cell.
    pub fn new(
        mut system: LinearSystem,
        fluid_volume: Vec<f64>,
        steady_far_field: Vec<(usize, f64)>,
        multigrid: MultigridParams,
    ) -> Self {
        decouple_inactive_cells(&mut system.operator);
        let correction = system.correction.take().map(|c| SparseCorrection::pack(&c)).unwrap_or_default();
        let base_sink = system.operator.sink.clone();
        StepSolver {
            system,
            correction,
            base_sink,
            fluid_volume,
            steady_far_field,
            multigrid,
            rungs: Vec::new(),
            krylov: BicgstabWork::default(),
            hierarchies_built: 0,
        }
    }

    pub fn fluid_volume(&self) -> &[f64] {
        &self.fluid_volume
    }

    pub fn len(&self) -> usize {
        self.base_sink.len()
    }

    pub fn is_empty(&self) -> bool {
        self.base_sink.is_empty()
    }

    /// Sets the diagonal of the step: base + σ·φh³ + the far-field coefficients of this time.
    pub fn set_step(&mut self, sigma: f64, far_field: impl Iterator<Item = (usize, f64)>) {
        let sink = &mut self.system.operator.sink;
        for ((s, b), v) in sink.iter_mut().zip(&self.base_sink).zip(&self.fluid_volume) {
            *s = b + sigma * v;
        }
        for (cell, coefficient) in far_field {
            sink[cell] += coefficient;
        }
        self.prepare_rung(sigma);
    }

    fn prepare_rung(&mut self, sigma: f64) {
        let index = rung_of(sigma);
        if let Some(pos) = self.rungs.iter().position(|r| r.index == index) {
            let rung = self.rungs.remove(pos);
            self.rungs.push(rung);
            return;
        }
        let rung_sigma = 2f64.powf(index as f64 / 2.0);
        let mut sink: Vec<f64> =
            self.base_sink.iter().zip(&self.fluid_volume).map(|(b, v)| b + rung_sigma * v).collect();
        for &(cell, coefficient) in &self.steady_far_field {
            sink[cell] += coefficient;
        }
        // Build from the operator with the rung's diagonal, then restore the step's diagonal.
        std::mem::swap(&mut self.system.operator.sink, &mut sink);
        let multigrid = Multigrid::new(&self.system.operator, self.system.scheme, self.multigrid.clone());
        std::mem::swap(&mut self.system.operator.sink, &mut sink);
        let work = multigrid.work();
        if self.rungs.len() >= MAX_HIERARCHIES {
            self.rungs.remove(0);
        }
        self.rungs.push(Rung { index, multigrid, work });
        self.hierarchies_built += 1;
    }

    /// `y = (σM + A) x` with the diagonal of the last [`StepSolver::set_step`].
    pub fn apply(&self, x: &[f64], y: &mut [f64]) {
        apply_step(&self.system, &self.correction, x, y);
    }

    /// `y = A₀ x`: the operator without storage and far-field terms (which change from step to step), so a
    /// product kept from an earlier step serves later ones: `A x = A₀ x + (step − base diagonal) ⊙ x`.
    pub fn apply_base(&mut self, x: &[f64], y: &mut [f64]) {
        std::mem::swap(&mut self.system.operator.sink, &mut self.base_sink);
        apply_step(&self.system, &self.correction, x, y);
        std::mem::swap(&mut self.system.operator.sink, &mut self.base_sink);
    }

    /// The diagonal of the current step (base + storage + far field).
    pub fn step_diagonal(&self) -> &[f64] {
        &self.system.operator.sink
    }

    /// The diagonal of `A₀`.
    pub fn base_diagonal(&self) -> &[f64] {
        &self.base_sink
    }

    /// Solves the step system for `x` (initial guess on entry) until `‖rhs − A x‖ ≤ target` (absolute).
    ///
    /// BiCGSTAB runs on the step system itself from the guess (its first true residual is the guess's), so a
    /// step costs one operator product more than its iterations' and none on a zero vector.
    pub fn solve(
        &mut self,
        rhs: &[f64],
        x: &mut [f64],
        target: f64,
        max_iterations: usize,
    ) -> Result<SolveInfo, SolveError> {
        let rhs_norm = rhs.iter().map(|v| v * v).sum::<f64>().sqrt();
        if !rhs_norm.is_finite() {
            return Err(SolveError::NonFinite { iteration: 0 });
        }
        if rhs_norm == 0.0 {
            // bicgstab answers x = 0 exactly, which solves the step.
            x.iter_mut().for_each(|v| *v = 0.0);
            return Ok(SolveInfo { iterations: 0, relative_residual: 0.0, residual_history: vec![0.0] });
        }
        let params = KrylovParams { relative_tolerance: target / rhs_norm, max_iterations };
        let system = &self.system;
        let correction = &self.correction;
        let Some(rung) = self.rungs.last_mut() else {
            return Err(SolveError::NonFinite { iteration: 0 });
        };
        let (multigrid, work) = (&rung.multigrid, &mut rung.work);
        bicgstab(
            &|u: &[f64], y: &mut [f64]| apply_step(system, correction, u, y),
            |r, z| multigrid.precondition(r, z, work),
            RightHandSide::Dense(rhs),
            x,
            &BicgstabParams { krylov: params, ..BicgstabParams::default() },
            &mut self.krylov,
        )
    }
}

fn apply_step(system: &LinearSystem, correction: &SparseCorrection, x: &[f64], y: &mut [f64]) {
    apply_corrected(&system.operator, system.scheme, correction, x, y);
}
