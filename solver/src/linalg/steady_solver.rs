//! The steady solve `A x = b`: BiCGSTAB preconditioned on the right by one geometric multigrid cycle.
//!
//! `A` is the face-coupled operator under the system's advection scheme plus an optional sparse correction (rows
//! of cut cells whose fluxes use wider interpolation). The correction enters the products of the Krylov method
//! only; the multigrid hierarchy is built from the face-coupled part, which the Krylov method corrects for.

use super::apply_operator::{decouple_inactive_cells, PackedOperator};
use super::krylov::{
    bicgstab, BicgstabParams, BicgstabWork, KrylovParams, LinearOperator, RightHandSide, SolveError,
    SolveInfo,
};
use super::multigrid::{Multigrid, MultigridParams};
use super::operator::{AdvectionScheme, FaceCoupledOperator};
use super::sparse_correction::SparseCorrection;
use super::stencil::Stencil7;
use super::vector::norm;
use sprs::CsMat;
use std::sync::Mutex;

/// The system solved: the stencil of `operator` under `scheme`, plus an optional sparse correction added to it.
#[derive(Clone, Debug)]
pub struct LinearSystem {
    pub operator: FaceCoupledOperator,
    pub scheme: AdvectionScheme,
    /// Square, one row per grid cell; CSR or CSC (stored as CSR).
    pub correction: Option<CsMat<f64>>,
}

/// Built once per operator; reusable for many right-hand sides. While it lives it holds the system's flux
/// arrays and activity, and the conductances, sinks and correction only in packed form (the arrays come back
/// with [`SteadySolver::into_system`]).
pub struct SteadySolver {
    /// The system with empty conductance and sink arrays and no correction.
    system: LinearSystem,
    /// Whether the system came with a correction (given back as a CSR matrix).
    has_correction: bool,
    /// The operator's conductances and sinks and the correction's nonzero rows, packed for the product (which
    /// reads the operator's fluxes).
    packed: PackedOperator,
    multigrid: Multigrid,
    /// Multigrid work vectors kept between solves (taken by one solve at a time; a concurrent solve allocates).
    work: Mutex<Option<super::multigrid::MultigridWork>>,
    /// Krylov work vectors kept between solves, first in the memory of the dropped conductance and sink arrays.
    krylov: Mutex<Option<BicgstabWork>>,
}

impl SteadySolver {
    /// Builds the multigrid hierarchy. Faces that touch an inactive grid cell are decoupled (conductance and flux
    /// set to zero), which the operator's contract already requires; a CSC correction is converted to CSR.
    pub fn new(mut system: LinearSystem, params: MultigridParams) -> Self {
        let n = system.operator.sink.len();
        decouple_inactive_cells(&mut system.operator);
        let has_correction = system.correction.is_some();
        let correction = match system.correction.take() {
            Some(c) => {
                assert_eq!(c.shape(), (n, n), "correction matrix must be square with one row per grid cell");
                SparseCorrection::pack(&c)
            }
            None => SparseCorrection::default(),
        };
        let packed = PackedOperator::pack_corrected(&system.operator, correction);
        let multigrid = Multigrid::new(&system.operator, system.scheme, params);
        let [gx, gy, gz] = std::mem::take(&mut system.operator.conductance);
        let sink = std::mem::take(&mut system.operator.sink);
        let krylov = BicgstabWork::from_buffers([gx, gy, gz, sink]);
        SteadySolver {
            system,
            has_correction,
            packed,
            multigrid,
            work: Mutex::new(None),
            krylov: Mutex::new(Some(krylov)),
        }
    }

    /// Number of unknowns (grid cells).
    fn len(&self) -> usize {
        self.system.operator.active.len()
    }

    /// `y = A x` with the full system (face-coupled operator plus correction).
    pub fn apply(&self, x: &[f64], y: &mut [f64]) {
        self.packed.apply(&self.system.operator, self.system.scheme, x, y);
    }

    /// `‖b − A x‖₂`.
    pub fn residual_norm(&self, rhs: &[f64], x: &[f64]) -> f64 {
        let mut r = vec![0.0; rhs.len()];
        self.apply(x, &mut r);
        r.iter_mut().zip(rhs).for_each(|(r, b)| *r = b - *r);
        norm(&r)
    }

    /// Solves `A x = rhs`; `x` holds the initial guess on entry and the solution on success.
    pub fn solve(&self, rhs: &[f64], x: &mut [f64], params: &KrylovParams) -> Result<SolveInfo, SolveError> {
        let n = self.len();
        assert_eq!(rhs.len(), n, "right-hand side has the wrong length");
        assert_eq!(x.len(), n, "solution vector has the wrong length");
        let cached = self.work.lock().ok().and_then(|mut w| w.take());
        let mut work = cached.unwrap_or_else(|| self.multigrid.work());
        let mut krylov = self.krylov.lock().ok().and_then(|mut w| w.take()).unwrap_or_default();
        let result = bicgstab(
            self,
            |r, z| self.multigrid.precondition(r, z, &mut work),
            RightHandSide::Dense(rhs),
            x,
            &BicgstabParams { krylov: params.clone(), ..BicgstabParams::default() },
            &mut krylov,
        );
        if let Ok(mut slot) = self.work.lock() {
            *slot = Some(work);
        }
        if let Ok(mut slot) = self.krylov.lock() {
            *slot = Some(krylov);
        }
        result
    }

    /// Frees the work vectors kept between solves (a later solve allocates them again): for a solver kept
    /// alive, between solves, at the size of its operator and hierarchy only.
    pub fn release_work(&self) {
        if let Ok(mut work) = self.work.lock() {
            *work = None;
        }
        if let Ok(mut krylov) = self.krylov.lock() {
            *krylov = None;
        }
    }

    /// Bytes that one solve allocates beside the solver (multigrid and Krylov work vectors), e.g. to size how
    /// many solves may run at once.
    pub fn solve_work_bytes(&self) -> usize {
        self.multigrid.work_bytes() + 6 * 8 * self.len()
    }

    /// Whether each grid cell holds fluid (an unknown).
    pub fn active(&self) -> &[bool] {
        &self.system.operator.active
    }

    /// The system back, bit for bit as given except that faces touching inactive cells are decoupled (which the
    /// operator's contract already required) and the correction is in CSR. The hierarchy is freed first.
    pub fn into_system(self) -> LinearSystem {
        let SteadySolver { mut system, has_correction, packed, multigrid, work, krylov } = self;
        drop((multigrid, work, krylov));
        let n = system.operator.active.len();
        (system.operator.conductance, system.operator.sink) = packed.unpack_coefficients();
        system.correction = has_correction.then(|| packed.correction().to_csr(n));
        system
    }

    /// Number of multigrid levels (1: the operator is solved directly).
    pub fn levels(&self) -> usize {
        self.multigrid.levels()
    }

    /// The full matrix A (stencil plus correction) in CSR form, e.g. for export.
    pub fn assembled_matrix(&self) -> CsMat<f64> {
        let mut operator = self.system.operator.clone();
        (operator.conductance, operator.sink) = self.packed.unpack_coefficients();
        let stencil = Stencil7::assemble(&operator, self.system.scheme).to_csr();
        match self.has_correction {
            true => &stencil + &self.packed.correction().to_csr(self.len()),
            false => stencil,
        }
    }

    /// Bytes held by the solver while it solves: the system's flux arrays and activity, the packed operator,
    /// hierarchy, multigrid work vectors and the six Krylov vectors of a solve.
    pub fn memory_bytes(&self) -> usize {
        let n = self.len();
        let flux: usize = self.system.operator.flux.iter().map(|f| 8 * f.len()).sum();
        flux + n
            + self.multigrid.memory_bytes()
            + self.multigrid.work_bytes()
            + 6 * 8 * n
            + self.packed.memory_bytes()
    }
}

impl LinearOperator for SteadySolver {
    fn apply(&self, x: &[f64], y: &mut [f64]) {
        SteadySolver::apply(self, x, y)
    }
}

/// Bytes held by a linear system (operator arrays and correction).
pub fn system_memory_bytes(system: &LinearSystem) -> usize {
    let op = &system.operator;
    let faces: usize = op.conductance.iter().chain(op.flux.iter()).map(|v| 8 * v.len()).sum();
    let correction = system.correction.as_ref().map_or(0, |c| 16 * c.nnz() + 8 * (c.outer_dims() + 1));
    faces + 8 * op.sink.len() + op.active.len() + correction
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::test_problems::{box_with_holes, random_holes, random_operator, random_vector, Hole};
    use crate::linalg::Prolongation;
    use std::f64::consts::PI;

    fn solve(op: FaceCoupledOperator, rhs: &[f64], params: MultigridParams) -> (Vec<f64>, SolveInfo) {
        let solver = SteadySolver::new(
            LinearSystem { operator: op, scheme: AdvectionScheme::Central, correction: None },
            params,
        );
        let mut x = vec![0.0; rhs.len()];
        let info = solver.solve(rhs, &mut x, &KrylovParams::default()).expect("converges");
        assert!(info.relative_residual <= 1e-8);
        let check = solver.residual_norm(rhs, &x) / norm(rhs);
        assert!(
            (check - info.relative_residual).abs() <= 1e-12,
            "reported {} true {check}",
            info.relative_residual
        );
        (x, info)
    }

    /// Unit source density in every active cell.
    fn unit_source(op: &FaceCoupledOperator) -> Vec<f64> {
        let h3 = (1.0 / op.shape[0] as f64).powi(3);
        op.active.iter().map(|&a| if a { h3 } else { 0.0 }).collect()
    }

    fn few_holes() -> Vec<Hole> {
        vec![
            ([0.3, 0.4, 0.5], 0.12),
            ([0.65, 0.6, 0.35], 0.1),
            ([0.5, 0.25, 0.75], 0.08),
            ([0.7, 0.75, 0.75], 0.09),
        ]
    }

    /// −∇²u = 3π² sin πx sin πy sin πz on the unit cube, u = 0 on the boundary (cell-centred, boundary faces
    /// folded into the sink): the discretisation is second order (common practice), so the max error must
    /// fall by ≈ 4 per halving of h.
    #[test]
    fn poisson_manufactured_solution_is_second_order() {
        let mut errors = Vec::new();
        for n in [16, 32] {
            let op = box_with_holes(n, &[], 0.0);
            let h = 1.0 / n as f64;
            let exact = |p: usize| {
                let (i, j, k) = (p % n, (p / n) % n, p / (n * n));
                [i, j, k].iter().map(|&c| (PI * (c as f64 + 0.5) * h).sin()).product::<f64>()
            };
            let rhs: Vec<f64> = (0..n * n * n).map(|p| 3.0 * PI * PI * exact(p) * h.powi(3)).collect();
            let (x, _) = solve(op, &rhs, MultigridParams::default());
            errors.push((0..x.len()).map(|p| (x[p] - exact(p)).abs()).fold(0.0, f64::max));
        }
        let order = (errors[0] / errors[1]).log2();
        assert!(order >= 1.8, "errors {errors:?}, observed order {order}");
    }

    /// Iterations to 1e-8 must not grow with the grid (the multigrid acceptance test): diffusion around four
    /// spherical holes with a potential flow at cell Péclet number 1, 32³ → 64³ → 128³, at most +3 in total.
    #[test]
    fn iterations_stay_flat_under_refinement() {
        let mut iterations = Vec::new();
        for n in [32, 64, 128] {
            let op = box_with_holes(n, &few_holes(), 1.0);
            let rhs = unit_source(&op);
            let (_, info) = solve(op, &rhs, MultigridParams::default());
            iterations.push(info.iterations);
        }
        assert!(iterations[2] <= iterations[0] + 3, "iterations 32³, 64³, 128³: {iterations:?}");
        assert!(iterations.iter().all(|&i| i <= 15), "iterations {iterations:?}");
    }

    /// Advection-dominated coarse levels (fine cell Péclet number 2, so 16 on the fourth level) still converge.
    #[test]
    fn nonsymmetric_problem_at_cell_peclet_two_converges() {
        let op = box_with_holes(64, &random_holes(20, 0.05, 3), 2.0);
        let rhs = unit_source(&op);
        let (x, info) = solve(op, &rhs, MultigridParams::default());
        assert!(info.iterations <= 20, "{} iterations", info.iterations);
        assert!(x.iter().all(|v| v.is_finite()));
    }

    #[test]
    fn one_iteration_reports_no_convergence_with_residual() {
        let op = box_with_holes(16, &few_holes(), 1.0);
        let rhs = unit_source(&op);
        let solver = SteadySolver::new(
            LinearSystem { operator: op, scheme: AdvectionScheme::Central, correction: None },
            MultigridParams::default(),
        );
        let mut x = vec![0.0; rhs.len()];
        let params = KrylovParams { relative_tolerance: 1e-12, max_iterations: 1 };
        match solver.solve(&rhs, &mut x, &params) {
            Err(SolveError::NoConvergence { iterations, relative_residual, residual_history }) => {
                assert_eq!(iterations, 1);
                assert!(relative_residual > 1e-12 && relative_residual < 1.0);
                assert_eq!(residual_history.len(), 2);
                let check = solver.residual_norm(&rhs, &x) / norm(&rhs);
                assert!((check - relative_residual).abs() < 1e-12);
            }
            other => panic!("expected NoConvergence, got {other:?}"),
        }
    }

    /// Inactive rows are the identity: the solution vanishes there for a zero right-hand side there, and the
    /// assembled matrix (with a correction) equals `apply`.
    #[test]
    fn correction_inactive_rows_and_assembled_matrix() {
        let op = box_with_holes(12, &few_holes(), 0.5);
        let n = op.sink.len();
        let inactive = op.active.iter().position(|a| !a).expect("holes leave inactive cells");
        let active_rows: Vec<usize> = (0..n).filter(|&p| op.active[p]).take(40).collect();
        let mut tri = sprs::TriMat::new((n, n));
        for (m, &p) in active_rows.iter().enumerate() {
            let q = active_rows[(m + 7) % active_rows.len()];
            tri.add_triplet(p, q, -0.05 / 12.0);
            tri.add_triplet(p, p, 0.05 / 12.0);
        }
        let correction: CsMat<f64> = tri.to_csc();
        let rhs = unit_source(&op);
        let solver = SteadySolver::new(
            LinearSystem { operator: op, scheme: AdvectionScheme::Central, correction: Some(correction) },
            MultigridParams::default(),
        );
        let x = random_vector(n, 17);
        let mut y = vec![0.0; n];
        solver.apply(&x, &mut y);
        let a = solver.assembled_matrix();
        let xs = sprs::CsVec::new(n, (0..n).collect(), x.clone());
        let ya = &a * &xs;
        for p in 0..n {
            assert!((y[p] - ya[p]).abs() < 1e-13, "row {p}");
        }
        let mut u = vec![0.0; n];
        let info = solver.solve(&rhs, &mut u, &KrylovParams::default()).expect("converges with correction");
        assert!(info.relative_residual <= 1e-8);
        assert_eq!(u[inactive], 0.0);
    }

    /// The solver holds the conductances, sinks and correction packed while it lives and gives the system back
    /// bit for bit (faces of inactive cells decoupled, the correction in CSR).
    #[test]
    fn the_system_comes_back_bit_for_bit() {
        let mut op = box_with_holes(12, &few_holes(), 0.5);
        op.sink.iter_mut().enumerate().for_each(|(p, s)| *s += if p % 3 == 0 { 1e-4 } else { 0.0 });
        let n = op.sink.len();
        let mut tri = sprs::TriMat::new((n, n));
        for p in (0..n).filter(|&p| op.active[p]).step_by(17) {
            tri.add_triplet(p, (p + 5) % n, -0.01);
            tri.add_triplet(p, p, 0.0);
        }
        let correction: CsMat<f64> = tri.to_csc();
        let mut expected = op.clone();
        decouple_inactive_cells(&mut expected);
        let system = LinearSystem {
            operator: op,
            scheme: AdvectionScheme::Central,
            correction: Some(correction.clone()),
        };
        let back = SteadySolver::new(system, MultigridParams::default()).into_system();
        let bits = |v: &[f64]| v.iter().map(|g| g.to_bits()).collect::<Vec<_>>();
        for a in 0..3 {
            assert_eq!(
                bits(&back.operator.conductance[a]),
                bits(&expected.conductance[a]),
                "conductance {a}"
            );
            assert_eq!(bits(&back.operator.flux[a]), bits(&expected.flux[a]), "flux {a}");
        }
        assert_eq!(bits(&back.operator.sink), bits(&expected.sink));
        assert_eq!(back.operator.active, expected.active);
        assert_eq!(back.correction, Some(correction.to_csr()));
        let without = LinearSystem { operator: expected, scheme: AdvectionScheme::Upwind, correction: None };
        assert!(SteadySolver::new(without, MultigridParams::default()).into_system().correction.is_none());
    }

    /// Periodic axes, ragged (odd) sizes at every level and a single-level (direct) hierarchy.
    #[test]
    fn periodic_and_ragged_grids_converge() {
        for (shape, periodic) in [
            ([37, 23, 9], [false, true, true]),
            ([20, 21, 1], [true, true, false]),
            ([7, 6, 5], [true, false, true]),
        ] {
            let mut op = random_operator(shape, periodic, 40);
            op.flux.iter_mut().for_each(|f| f.iter_mut().for_each(|v| *v *= 0.5));
            op.sink.iter_mut().for_each(|s| *s *= 0.01);
            let rhs = random_vector(op.sink.len(), 41);
            let solver = SteadySolver::new(
                LinearSystem { operator: op, scheme: AdvectionScheme::Central, correction: None },
                MultigridParams::default(),
            );
            let mut x = vec![0.0; rhs.len()];
            let info = solver.solve(&rhs, &mut x, &KrylovParams::default());
            let info = info.unwrap_or_else(|e| panic!("{shape:?}: {e}"));
            assert!(
                info.iterations <= 25,
                "{shape:?}: {} iterations, {} levels",
                info.iterations,
                solver.levels()
            );
        }
    }

    /// Piecewise-constant prolongation (the default, cheaper per cycle) needs at most one iteration more than
    /// trilinear on a box with holes and flow; both converge.
    #[test]
    fn constant_prolongation_is_as_good_as_trilinear() {
        let op = box_with_holes(48, &few_holes(), 1.0);
        let rhs = unit_source(&op);
        let count = |prolongation| {
            solve(op.clone(), &rhs, MultigridParams { prolongation, ..MultigridParams::default() })
                .1
                .iterations
        };
        let (constant, trilinear) = (count(Prolongation::Constant), count(Prolongation::Trilinear));
        assert!(constant <= trilinear + 1, "constant {constant}, trilinear {trilinear}");
    }

    /// Pure diffusion with no-flux walls and a single pinned cell (how the Darcy pressure is fixed when no face
    /// prescribes it): nearly singular, the coarsest level carries the whole sink, still converges.
    #[test]
    fn neumann_problem_with_one_pinned_cell_converges() {
        let mut op = box_with_holes(48, &few_holes(), 0.0);
        op.sink.iter_mut().for_each(|s| *s = 0.0);
        let first = op.active.iter().position(|&a| a).expect("active cell");
        op.sink[first] = 1.0 / 48.0;
        let rhs: Vec<f64> = random_vector(op.sink.len(), 5)
            .iter()
            .zip(&op.active)
            .map(|(r, &a)| if a { *r } else { 0.0 })
            .collect();
        let (_, info) = solve(op, &rhs, MultigridParams::default());
        assert!(info.iterations <= 20, "{} iterations", info.iterations);
    }
}
