//! Cell-centred geometric multigrid as a preconditioner: one cycle approximates `z ≈ A⁻¹ r`.
//!
//! The hierarchy coarsens the physical coefficients of the face-coupled operator ([`super::coarsen`]) until a
//! level has at most `coarsest_size` cells, which is solved by dense LU. The finest level uses the system's
//! advection scheme, coarse levels use upwinding (the coarse cell Péclet number doubles per level; upwinding
//! keeps coarse operators M-matrices). Levels are stored and cycled in f32, scaled by `1/max diag`, so that
//! any SI magnitude stays well inside the f32 range; the Krylov method around it works in f64.

use super::coarsen::coarsen_operator;
use super::dense_lu::DenseLu;
use super::operator::{AdvectionScheme, FaceCoupledOperator};
use super::smooth::{gauss_seidel_colour, BLACK, RED};
use super::stencil::Stencil7;
use super::transfer::{prolongate_add, restrict_residual, Prolongation};
use rayon::prelude::*;

/// Shape of the recursion.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Cycle {
    /// One coarse-grid visit per level.
    V,
    /// Two coarse-grid visits per level (more robust, ~2× the coarse work).
    W,
}

/// Parameters of the multigrid preconditioner.
#[derive(Clone, Debug, PartialEq)]
pub struct MultigridParams {
    /// Red–black Gauss–Seidel sweeps (red then black) before the coarse correction; default 2.
    pub pre_smoothing: usize,
    /// Sweeps (black then red) after the coarse correction; default 2.
    pub post_smoothing: usize,
    /// A level with at most this many grid cells is solved directly (dense LU); default 512.
    pub coarsest_size: usize,
    /// Default V.
    pub cycle: Cycle,
    /// Default piecewise constant: with the `sum/2` coarse conductances it needs as few iterations as
    /// trilinear and costs less per cycle (measured, see the solver tests and the timing example).
    pub prolongation: Prolongation,
    /// Upper bound on the number of levels; default 16.
    pub max_levels: usize,
}

impl Default for MultigridParams {
    fn default() -> Self {
        MultigridParams {
            pre_smoothing: 2,
            post_smoothing: 2,
            coarsest_size: 512,
            cycle: Cycle::V,
            prolongation: Prolongation::Constant,
            max_levels: 16,
        }
    }
}

/// Largest coarsest level factorised densely when `max_levels` stops the coarsening early; beyond it the
/// coarsest level is smoothed instead.
const MAX_DENSE_ROWS: usize = 4096;
/// Sweeps on a coarsest level too large for LU.
const COARSEST_SWEEPS: usize = 40;

struct Level {
    stencil: Stencil7<f32>,
    active: Vec<bool>,
}

enum CoarsestSolve {
    Lu(DenseLu),
    Smoothing,
}

/// The level hierarchy; immutable after construction, so one hierarchy serves many right-hand sides and
/// threads.
pub(crate) struct Multigrid {
    levels: Vec<Level>,
    coarsest: CoarsestSolve,
    /// The f32 levels hold `scale · A`.
    scale: f64,
    params: MultigridParams,
}

/// Per-cycle vectors of every level (f32).
pub(crate) struct MultigridWork {
    x: Vec<Vec<f32>>,
    b: Vec<Vec<f32>>,
}

impl Multigrid {
    pub fn new(op: &FaceCoupledOperator, scheme: AdvectionScheme, params: MultigridParams) -> Self {
        // The finest level fixes the scale 1/max diag of every level.
        let (finest, scale) = Stencil7::<f32>::assemble_normalised(op, scheme);
        let mut finest = Some(finest);
        let mut levels = Vec::new();
        let mut coarse_op: Option<FaceCoupledOperator> = None;
        let mut level_scheme = scheme;
        let coarsest = loop {
            let current = coarse_op.as_ref().unwrap_or(op);
            let n = current.sink.len();
            let cannot_coarsen = current.shape.iter().all(|&s| s == 1);
            let last =
                n <= params.coarsest_size || cannot_coarsen || levels.len() + 1 >= params.max_levels.max(1);
            let stencil = match finest.take() {
                Some(s) => s,
                None => Stencil7::<f32>::assemble_scaled(current, level_scheme, scale),
            };
            if last {
                let solve = if n <= MAX_DENSE_ROWS.max(params.coarsest_size) {
                    let exact = Stencil7::<f64>::assemble_scaled(current, level_scheme, scale);
                    CoarsestSolve::Lu(DenseLu::factorise(n, dense_row_major(&exact.to_csr())))
                } else {
                    CoarsestSolve::Smoothing
                };
                levels.push(Level { stencil, active: current.active.clone() });
                break solve;
            }
            levels.push(Level { stencil, active: current.active.clone() });
            let next = coarsen_operator(current);
            coarse_op = Some(next);
            level_scheme = AdvectionScheme::Upwind;
        };
        Multigrid { levels, coarsest, scale, params }
    }

    pub fn levels(&self) -> usize {
        self.levels.len()
    }

    /// Bytes held by the hierarchy (stencils, masks, LU factors).
    pub fn memory_bytes(&self) -> usize {
        let levels: usize = self.levels.iter().map(|l| l.stencil.memory_bytes() + l.active.len()).sum();
        levels
            + match &self.coarsest {
                CoarsestSolve::Lu(lu) => lu.memory_bytes(),
                CoarsestSolve::Smoothing => 0,
            }
    }

    /// Bytes of one [`MultigridWork`].
    pub fn work_bytes(&self) -> usize {
        self.levels.iter().map(|l| 8 * l.stencil.len()).sum()
    }

    pub fn work(&self) -> MultigridWork {
        MultigridWork {
            x: self.levels.iter().map(|l| vec![0.0; l.stencil.len()]).collect(),
            b: self.levels.iter().map(|l| vec![0.0; l.stencil.len()]).collect(),
        }
    }

    /// `z ≈ A⁻¹ r` by one cycle from a zero initial guess.
    pub fn precondition(&self, r: &[f64], z: &mut [f64], work: &mut MultigridWork) {
        // Scale the input to O(1) for f32: solve (scale·A) x = r/ρ, then z = scale·ρ·x.
        let rho = r.par_iter().with_min_len(8192).map(|v| v.abs()).reduce(|| 0.0, f64::max);
        if rho == 0.0 || !rho.is_finite() {
            z.par_iter_mut().zip(r.par_iter()).for_each(|(zi, &ri)| *zi = if rho == 0.0 { 0.0 } else { ri });
            return;
        }
        let inv = 1.0 / rho;
        work.b[0]
            .par_iter_mut()
            .zip(r.par_iter())
            .with_min_len(8192)
            .for_each(|(b, &v)| *b = (v * inv) as f32);
        work.x[0].par_iter_mut().with_min_len(8192).for_each(|v| *v = 0.0);
        self.cycle(0, work);
        let back = self.scale * rho;
        z.par_iter_mut()
            .zip(work.x[0].par_iter())
            .with_min_len(8192)
            .for_each(|(zi, &x)| *zi = back * x as f64);
    }

    fn cycle(&self, l: usize, work: &mut MultigridWork) {
        let level = &self.levels[l];
        if l + 1 == self.levels.len() {
            self.solve_coarsest(work);
            return;
        }
        {
            let (x, b) = (&mut work.x[l], &work.b[l]);
            for _ in 0..self.params.pre_smoothing {
                gauss_seidel_colour(&level.stencil, x, b, RED);
                gauss_seidel_colour(&level.stencil, x, b, BLACK);
            }
        }
        {
            let (fine_b, coarse_b) = work.b.split_at_mut(l + 1);
            restrict_residual(&level.stencil, &level.active, &work.x[l], &fine_b[l], &mut coarse_b[0]);
        }
        let visits = match self.params.cycle {
            Cycle::V => 1,
            Cycle::W => 2,
        };
        work.x[l + 1].iter_mut().for_each(|v| *v = 0.0);
        for visit in 0..visits {
            if visit > 0 {
                // Second visit: restrict the residual of the coarse level's own current iterate.
                self.cycle_again(l + 1, work);
            } else {
                self.cycle(l + 1, work);
            }
        }
        {
            let coarse = &self.levels[l + 1];
            let (fine_x, coarse_x) = work.x.split_at_mut(l + 1);
            prolongate_add(
                level.stencil.shape(),
                level.stencil.periodic(),
                &level.active,
                &coarse.active,
                &coarse_x[0],
                &mut fine_x[l],
                self.params.prolongation,
            );
        }
        let (x, b) = (&mut work.x[l], &work.b[l]);
        for _ in 0..self.params.post_smoothing {
            gauss_seidel_colour(&level.stencil, x, b, BLACK);
            gauss_seidel_colour(&level.stencil, x, b, RED);
        }
    }

    /// A further cycle on level `l` starting from its current iterate (the second visit of a W-cycle): solve
    /// for a correction of the current residual and add it.
    fn cycle_again(&self, l: usize, work: &mut MultigridWork) {
        let n = self.levels[l].stencil.len();
        let mut residual = vec![0.0f32; n];
        self.levels[l].stencil.apply(&work.x[l], &mut residual);
        let saved_x = std::mem::replace(&mut work.x[l], vec![0.0; n]);
        for (r, &b) in residual.iter_mut().zip(&work.b[l]) {
            *r = b - *r;
        }
        let saved_b = std::mem::replace(&mut work.b[l], residual);
        self.cycle(l, work);
        work.b[l] = saved_b;
        for (x, &s) in work.x[l].iter_mut().zip(&saved_x) {
            *x += s;
        }
    }

    fn solve_coarsest(&self, work: &mut MultigridWork) {
        let l = self.levels.len() - 1;
        match &self.coarsest {
            CoarsestSolve::Lu(lu) => {
                let mut v: Vec<f64> = work.b[l].iter().map(|&b| b as f64).collect();
                lu.solve(&mut v);
                for (x, v) in work.x[l].iter_mut().zip(v) {
                    *x = v as f32;
                }
            }
            CoarsestSolve::Smoothing => {
                let stencil = &self.levels[l].stencil;
                let (x, b) = (&mut work.x[l], &work.b[l]);
                x.iter_mut().for_each(|v| *v = 0.0);
                for _ in 0..COARSEST_SWEEPS {
                    gauss_seidel_colour(stencil, x, b, RED);
                    gauss_seidel_colour(stencil, x, b, BLACK);
                }
            }
        }
    }
}

/// Row-major dense copy of a square CSR matrix.
fn dense_row_major(a: &sprs::CsMat<f64>) -> Vec<f64> {
    let n = a.rows();
    let mut dense = vec![0.0; n * n];
    for (row, values) in a.outer_iterator().enumerate() {
        for (col, &v) in values.iter() {
            dense[row * n + col] += v;
        }
    }
    dense
}

#[cfg(test)]
mod kernel_timing {
    use super::*;
    use crate::linalg::apply_operator::apply_face_coupled;
    use crate::linalg::test_problems::{box_with_holes, random_holes};
    use std::time::Instant;

    #[test]
    #[ignore = "timing study, prints"]
    fn kernel_times_128() {
        let n = 128;
        let op = box_with_holes(n, &random_holes(200, 4.5 / n as f64, 11), 0.0);
        let mg = Multigrid::new(&op, AdvectionScheme::Central, MultigridParams::default());
        let len = op.sink.len();
        let l0 = &mg.levels[0];
        let mut x = vec![0.0f32; len];
        let b = vec![1.0f32; len];
        let reps = 10;
        let t = Instant::now();
        for _ in 0..reps {
            gauss_seidel_colour(&l0.stencil, &mut x, &b, RED);
        }
        println!("GS colour sweep {:.2} ms", t.elapsed().as_secs_f64() * 1e3 / reps as f64);
        let mut cb = vec![0.0f32; mg.levels[1].stencil.len()];
        let t = Instant::now();
        for _ in 0..reps {
            restrict_residual(&l0.stencil, &l0.active, &x, &b, &mut cb);
        }
        println!("restrict {:.2} ms", t.elapsed().as_secs_f64() * 1e3 / reps as f64);
        for kind in [Prolongation::Constant, Prolongation::Trilinear] {
            let t = Instant::now();
            for _ in 0..reps {
                prolongate_add(op.shape, op.periodic, &l0.active, &mg.levels[1].active, &cb, &mut x, kind);
            }
            println!("prolongate {kind:?} {:.2} ms", t.elapsed().as_secs_f64() * 1e3 / reps as f64);
        }
        let xd = vec![1.0f64; len];
        let mut yd = vec![0.0f64; len];
        let t = Instant::now();
        for _ in 0..reps {
            apply_face_coupled(&op, AdvectionScheme::Central, &xd, &mut yd);
        }
        println!("apply f64 {:.2} ms", t.elapsed().as_secs_f64() * 1e3 / reps as f64);
        let mut work = mg.work();
        let t = Instant::now();
        for _ in 0..reps {
            mg.precondition(&xd, &mut yd, &mut work);
        }
        println!("V-cycle {:.2} ms", t.elapsed().as_secs_f64() * 1e3 / reps as f64);
    }
}
