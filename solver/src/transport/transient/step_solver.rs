//! The linear solve of one implicit step: `(σ M + A(t)) c = r`, with σ = α₀/Δt the storage coefficient and A(t)
//! the steady transport operator whose far-field faces change in time.
//!
//! The product uses the exact operator of the step. The multigrid preconditioner is built once per *rung* of a
//! ladder of storage coefficients (σ rounded to a power of √2) with the steady far-field coefficients, and is
//! reused for every step whose σ falls on that rung: fixed stepping therefore builds two hierarchies (BDF1 and
//! BDF2), and the preconditioner of a step depends on σ alone — so a run resumed from a checkpoint repeats the
//! uninterrupted run's arithmetic exactly. The Krylov solve is for the correction of the extrapolated guess,
//! stopped at the absolute residual `tol · ‖forcing‖` that a steady solve of the same case reaches.

use crate::linalg::apply_operator::{apply_face_coupled, decouple_inactive_cells};
use crate::linalg::multigrid::{Multigrid, MultigridWork};
use crate::linalg::{bicgstab, KrylovParams, LinearSystem, MultigridParams, SolveError, SolveInfo};
use sprs::CsMat;

/// Hierarchies kept at most (least recently built dropped first).
const MAX_HIERARCHIES: usize = 4;

struct Rung {
    index: i32,
    multigrid: Multigrid,
    work: MultigridWork,
}

/// Step solver of one flow phase.
pub struct StepSolver {
    system: LinearSystem,
    correction_rows: Vec<usize>,
    /// Diagonal without storage and far field: decay, other chamber faces, surface uptake.
    base_sink: Vec<f64>,
    /// Fluid volume φh³ of each grid cell (m³), zero where inactive.
    fluid_volume: Vec<f64>,
    /// Steady far-field coefficients (the preconditioner's boundary rows).
    steady_far_field: Vec<(usize, f64)>,
    multigrid: MultigridParams,
    rungs: Vec<Rung>,
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
        if let Some(c) = system.correction.take() {
            system.correction = Some(if c.is_csr() { c } else { c.to_csr() });
        }
        let correction_rows = match &system.correction {
            Some(c) => {
                c.outer_iterator().enumerate().filter(|(_, row)| row.nnz() > 0).map(|(r, _)| r).collect()
            }
            None => Vec::new(),
        };
        let base_sink = system.operator.sink.clone();
        StepSolver {
            system,
            correction_rows,
            base_sink,
            fluid_volume,
            steady_far_field,
            multigrid,
            rungs: Vec::new(),
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
        apply_step(&self.system, &self.correction_rows, x, y);
    }

    /// Solves the step system for `x` (initial guess on entry) until `‖rhs − A x‖ ≤ target` (absolute).
    pub fn solve(
        &mut self,
        rhs: &[f64],
        x: &mut [f64],
        target: f64,
        max_iterations: usize,
    ) -> Result<SolveInfo, SolveError> {
        let n = rhs.len();
        let mut residual = vec![0.0; n];
        self.apply(x, &mut residual);
        residual.iter_mut().zip(rhs).for_each(|(r, b)| *r = b - *r);
        let r0 = residual.iter().map(|v| v * v).sum::<f64>().sqrt();
        if !r0.is_finite() {
            return Err(SolveError::NonFinite { iteration: 0 });
        }
        if r0 <= target {
            return Ok(SolveInfo {
                iterations: 0,
                relative_residual: r0 / target.max(f64::MIN_POSITIVE),
                residual_history: vec![r0],
            });
        }
        let params = KrylovParams { relative_tolerance: target / r0, max_iterations };
        let mut delta = vec![0.0; n];
        let system = &self.system;
        let rows = &self.correction_rows;
        let Some(rung) = self.rungs.last_mut() else {
            return Err(SolveError::NonFinite { iteration: 0 });
        };
        let (multigrid, work) = (&rung.multigrid, &mut rung.work);
        let info = bicgstab(
            |u, y| apply_step(system, rows, u, y),
            |r, z| multigrid.precondition(r, z, work),
            &residual,
            &mut delta,
            &params,
        )?;
        x.iter_mut().zip(&delta).for_each(|(x, d)| *x += d);
        Ok(info)
    }
}

fn apply_step(system: &LinearSystem, rows: &[usize], x: &[f64], y: &mut [f64]) {
    apply_face_coupled(&system.operator, system.scheme, x, y);
    if let Some(c) = &system.correction {
        apply_correction(c, rows, x, y);
    }
}

fn apply_correction(c: &CsMat<f64>, rows: &[usize], x: &[f64], y: &mut [f64]) {
    for &row in rows {
        if let Some(values) = c.outer_view(row) {
            y[row] += values.iter().map(|(col, &a)| a * x[col]).sum::<f64>();
        }
    }
}
