//! The linear solve of one implicit step: `(σ M + A(t)) c = r`, with σ = α₀/Δt the storage coefficient and A(t)
//! the steady transport operator whose far-field faces change in time.
//!
//! The product uses the exact operator of the step. The multigrid preconditioner is built once per *rung* of a
//! ladder of storage coefficients (σ rounded to a power of √2) with the steady far-field coefficients, and is
//! reused for every step whose σ falls on that rung: fixed stepping therefore builds two hierarchies (BDF1 and
//! BDF2), and the preconditioner of a step depends on σ alone — so a run resumed from a checkpoint repeats the
//! uninterrupted run's arithmetic exactly. The Krylov solve starts from the projected guess and stops at the
//! absolute residual `tol · ‖forcing‖` that a steady solve of the same case reaches.

use crate::linalg::apply_operator::{apply_face_coupled, decouple_inactive_cells};
use crate::linalg::multigrid::{Multigrid, MultigridWork};
use crate::linalg::{
    bicgstab_with_work, BicgstabWork, KrylovParams, LinearSystem, MultigridParams, SolveError, SolveInfo,
};
use rayon::prelude::*;
use sprs::CsMat;

/// Hierarchies kept at most (least recently built dropped first).
const MAX_HIERARCHIES: usize = 4;

struct Rung {
    index: i32,
    multigrid: Multigrid,
    work: MultigridWork,
}

/// Grid cells per parallel task of the correction product.
const CORRECTION_CHUNK: usize = 1 << 15;

/// The nonzero rows of the sparse correction (cut cells' wider interpolation), packed for the product: row `k`
/// is grid cell `rows[k]` with entries `start[k]..start[k+1]`. Rows ascend, so a block of grid cells owns a
/// contiguous run of them and blocks can be summed in parallel, each row in the same order as serially.
struct CorrectionRows {
    rows: Vec<usize>,
    start: Vec<usize>,
    columns: Vec<usize>,
    values: Vec<f64>,
}

impl CorrectionRows {
    fn pack(c: &CsMat<f64>) -> Self {
        let mut packed =
            CorrectionRows { rows: Vec::new(), start: vec![0], columns: Vec::new(), values: Vec::new() };
        let converted;
        let csr = if c.is_csr() {
            c.view()
        } else {
            converted = c.to_csr();
            converted.view()
        };
        for (row, entries) in csr.outer_iterator().enumerate() {
            if entries.nnz() == 0 {
                continue;
            }
            for (col, &a) in entries.iter() {
                packed.columns.push(col);
                packed.values.push(a);
            }
            packed.rows.push(row);
            packed.start.push(packed.columns.len());
        }
        packed
    }

    /// `y += C x`.
    fn add_product(&self, x: &[f64], y: &mut [f64]) {
        if self.rows.is_empty() {
            return;
        }
        y.par_chunks_mut(CORRECTION_CHUNK).enumerate().for_each(|(block, y_block)| {
            let first = block * CORRECTION_CHUNK;
            let last = first + y_block.len();
            let k0 = self.rows.partition_point(|&r| r < first);
            let k1 = self.rows.partition_point(|&r| r < last);
            for k in k0..k1 {
                let (a, b) = (self.start[k], self.start[k + 1]);
                let sum: f64 =
                    self.columns[a..b].iter().zip(&self.values[a..b]).map(|(&col, &v)| v * x[col]).sum();
                y_block[self.rows[k] - first] += sum;
            }
        });
    }
}

/// Step solver of one flow phase.
pub struct StepSolver {
    /// The operator (the preconditioner is built from it); its sparse correction lives in `correction`.
    system: LinearSystem,
    correction: CorrectionRows,
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
        let correction = match system.correction.take() {
            Some(c) => CorrectionRows::pack(&c),
            None => {
                CorrectionRows { rows: Vec::new(), start: vec![0], columns: Vec::new(), values: Vec::new() }
            }
        };
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
        bicgstab_with_work(
            |u, y| apply_step(system, correction, u, y),
            |r, z| multigrid.precondition(r, z, work),
            rhs,
            x,
            &params,
            &mut self.krylov,
        )
    }
}

fn apply_step(system: &LinearSystem, correction: &CorrectionRows, x: &[f64], y: &mut [f64]) {
    apply_face_coupled(&system.operator, system.scheme, x, y);
    correction.add_product(x, y);
}

#[cfg(test)]
mod tests {
    use super::*;
    use sprs::TriMat;

    /// The packed, block-parallel product equals the product summed entry by entry, rows spread over several
    /// blocks, from CSR and CSC storage.
    #[test]
    fn packed_correction_matches_the_sparse_product() {
        let n = 3 * CORRECTION_CHUNK + 123;
        let x: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).cos()).collect();
        let mut triplets = TriMat::new((n, n));
        let mut expected = vec![0.0; n];
        for k in 0..5000usize {
            let row = (k * 7919) % n;
            for j in 0..(1 + k % 9) {
                let col = (row + j * 4099 + k) % n;
                let value = ((k + j) as f64).sin();
                triplets.add_triplet(row, col, value);
                expected[row] += value * x[col];
            }
        }
        let csc: CsMat<f64> = triplets.to_csc();
        for matrix in [csc.to_csr(), csc] {
            let packed = CorrectionRows::pack(&matrix);
            assert!(packed.rows.windows(2).all(|w| w[0] < w[1]));
            let mut y = vec![1.0; n];
            packed.add_product(&x, &mut y);
            for (p, (got, want)) in y.iter().zip(&expected).enumerate() {
                assert!(
                    (got - 1.0 - want).abs() <= 1e-12 * (1.0 + want.abs()),
                    "row {p}: {got} vs 1 + {want}"
                );
            }
        }
    }
}
