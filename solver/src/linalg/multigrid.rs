//! Cell-centred geometric multigrid as a preconditioner: one cycle approximates `z ≈ A⁻¹ r`.
//!
//! The hierarchy coarsens the physical coefficients of the face-coupled operator ([`super::coarsen`]) until a
//! level has at most `coarsest_size` cells, which is solved by dense LU. The finest level uses the system's
//! advection scheme, coarse levels use upwinding (the coarse cell Péclet number doubles per level; upwinding
//! keeps coarse operators M-matrices). Levels are stored and cycled in f32, scaled by `1/max diag`, so that
//! any SI magnitude stays well inside the f32 range, with their off-diagonal coefficients in bfloat16 and the
//! rounding folded into the diagonal (row sums kept; see `coloured_stencil`); the Krylov method around it works in
//! f64.

use super::coarsen::coarsen_operator;
use super::coloured_stencil::{ColouredStencil, Split};
use super::dense_lu::DenseLu;
use super::operator::{AdvectionScheme, FaceCoupledOperator};
use super::real::Real;
use super::smooth::{colours_to_correct, colours_with_residual, post_smooth, pre_smooth};
use super::stencil::{min_lines, Stencil7};
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
    /// trilinear and costs less per cycle (bench/RECORDS.md).
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
    stencil: ColouredStencil<f32>,
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

/// Per-cycle vectors of every level (f32, red–black split layout).
pub(crate) struct MultigridWork {
    x: Vec<Split<f32>>,
    b: Vec<Split<f32>>,
    /// Scale ρ of the last input (the cycle solves for r/ρ in f32); reused while it keeps r/ρ well inside the
    /// f32 range, which saves a pass over r.
    rho: f64,
}

/// The input scale is refreshed when `max|r|/ρ` leaves [2⁻²⁰, 2²⁰] (f32 spans 2^±126).
const RHO_RANGE: f64 = 1048576.0;

impl Multigrid {
    pub fn new(op: &FaceCoupledOperator, scheme: AdvectionScheme, params: MultigridParams) -> Self {
        // The finest level fixes the scale 1/max diag of every level.
        let (finest, scale) = ColouredStencil::<f32>::assemble_normalised(op, scheme);
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
                None => ColouredStencil::<f32>::assemble(current, level_scheme, scale),
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
        self.levels.iter().map(|l| 4 * 4 * l.stencil.half() * l.stencil.lines()).sum()
    }

    pub fn work(&self) -> MultigridWork {
        MultigridWork {
            x: self.levels.iter().map(|l| l.stencil.zeros()).collect(),
            b: self.levels.iter().map(|l| l.stencil.zeros()).collect(),
            rho: 0.0,
        }
    }

    /// `z ≈ A⁻¹ r` by one cycle from a zero initial guess. Inactive cells (identity rows of A) get `z = r`
    /// exactly and a zero right-hand side inside the cycle, so no level needs an activity mask. `r` and `z` are
    /// f64 or f32 vectors.
    pub fn precondition<T: Real>(&self, r: &[T], z: &mut [T], work: &mut MultigridWork) {
        // Scale the input to O(1) for f32: solve (scale·A) x = r/ρ, then z = scale·ρ·x.
        let mut rho = work.rho;
        let mut max = if rho > 0.0 { self.load_input(r, 1.0 / rho, work) } else { f64::NAN };
        if !(max / rho >= 1.0 / RHO_RANGE && max / rho <= RHO_RANGE) {
            max = self.load_input(r, 1.0, work);
            if max == 0.0 || !max.is_finite() {
                // Zero (or non-finite) input on the active cells: z = 0 there (or r, so that BiCGSTAB sees it).
                let active = &self.levels[0].active;
                z.par_iter_mut()
                    .zip(r.par_iter())
                    .enumerate()
                    .with_min_len(8192)
                    .for_each(|(p, (zi, &ri))| *zi = if active[p] && max == 0.0 { T::ZERO } else { ri });
                return;
            }
            // A power of two: scaling by it is exact, so a reused ρ gives the same f32 values as a fresh one.
            rho = 2f64.powi(max.log2().round() as i32);
            self.load_input(r, 1.0 / rho, work);
        }
        work.rho = rho;
        self.cycle(0, work);
        let back = self.scale * rho;
        let level = &self.levels[0];
        let [nx, ny, _] = level.stencil.shape();
        let h = level.stencil.half();
        let [x0, x1] = &work.x[0];
        z.par_chunks_mut(nx).zip(r.par_chunks(nx)).enumerate().with_min_len(min_lines(nx)).for_each(
            |(line, (zl, rl))| {
                let parity = (line % ny + line / ny) % 2;
                let (seg0, seg1) = (&x0[line * h..(line + 1) * h], &x1[line * h..(line + 1) * h]);
                let active = &level.active[line * nx..(line + 1) * nx];
                for i in 0..nx {
                    let x = if (i + parity) % 2 == 0 { seg0[i / 2] } else { seg1[i / 2] };
                    zl[i] = if active[i] { T::from_f64(back * x as f64) } else { rl[i] };
                }
            },
        );
    }

    /// Writes `r·inv` (f32, split layout, zero on inactive cells) into the finest right-hand side and returns
    /// `max|r|` over active cells (NaN if any is not finite).
    fn load_input<T: Real>(&self, r: &[T], inv: f64, work: &mut MultigridWork) -> f64 {
        let level = &self.levels[0];
        let [nx, ny, _] = level.stencil.shape();
        let h = level.stencil.half();
        let [b0, b1] = &mut work.b[0];
        b0.par_chunks_mut(h)
            .zip(b1.par_chunks_mut(h))
            .zip(r.par_chunks(nx))
            .enumerate()
            .with_min_len(min_lines(nx))
            .map(|(line, ((out0, out1), rl))| {
                let parity = (line % ny + line / ny) % 2;
                let active = &level.active[line * nx..(line + 1) * nx];
                let mut max = 0.0f64;
                for i in 0..nx {
                    let v = if active[i] { rl[i].to_f64() } else { 0.0 };
                    max = if v.abs() > max || v.is_nan() { v.abs() } else { max };
                    let value = (v * inv) as f32;
                    if (i + parity) % 2 == 0 {
                        out0[i / 2] = value;
                    } else {
                        out1[i / 2] = value;
                    }
                }
                max
            })
            .reduce(|| 0.0, |a, b| if a.is_nan() || b.is_nan() { f64::NAN } else { a.max(b) })
    }

    fn cycle(&self, l: usize, work: &mut MultigridWork) {
        if l + 1 == self.levels.len() {
            self.solve_coarsest(work);
            return;
        }
        let level = &self.levels[l];
        let coarse = &self.levels[l + 1];
        pre_smooth(&level.stencil, &mut work.x[l], &work.b[l], self.params.pre_smoothing);
        {
            let (fine_b, coarse_b) = work.b.split_at_mut(l + 1);
            restrict_residual(
                &level.stencil,
                &work.x[l],
                &fine_b[l],
                colours_with_residual(&level.stencil, self.params.pre_smoothing),
                &coarse.stencil,
                &mut coarse_b[0],
            );
        }
        // The coarse cycle starts from zero by itself.
        self.cycle(l + 1, work);
        if self.params.cycle == Cycle::W {
            // Second visit: a further cycle on the coarse level's own current residual.
            self.cycle_again(l + 1, work);
        }
        {
            let (fine_x, coarse_x) = work.x.split_at_mut(l + 1);
            prolongate_add(
                &level.stencil,
                &coarse.stencil,
                &coarse.active,
                &coarse_x[0],
                &mut fine_x[l],
                colours_to_correct(&level.stencil, self.params.post_smoothing),
                self.params.prolongation,
            );
        }
        post_smooth(&level.stencil, &mut work.x[l], &work.b[l], self.params.post_smoothing);
    }

    /// A further cycle on level `l` starting from its current iterate (the second visit of a W-cycle): solve
    /// for a correction of the current residual and add it.
    fn cycle_again(&self, l: usize, work: &mut MultigridWork) {
        let stencil = &self.levels[l].stencil;
        let mut residual = stencil.zeros();
        stencil.residual(&work.x[l], &work.b[l], &mut residual);
        let saved_x = std::mem::replace(&mut work.x[l], stencil.zeros());
        let saved_b = std::mem::replace(&mut work.b[l], residual);
        self.cycle(l, work);
        work.b[l] = saved_b;
        for (x, s) in work.x[l].iter_mut().zip(&saved_x) {
            x.iter_mut().zip(s).for_each(|(x, &s)| *x += s);
        }
    }

    fn solve_coarsest(&self, work: &mut MultigridWork) {
        let l = self.levels.len() - 1;
        let stencil = &self.levels[l].stencil;
        match &self.coarsest {
            CoarsestSolve::Lu(lu) => {
                let mut v: Vec<f64> = stencil.to_natural(&work.b[l]).iter().map(|&b| b as f64).collect();
                lu.solve(&mut v);
                let v: Vec<f32> = v.iter().map(|&v| v as f32).collect();
                stencil.load_natural(&v, &mut work.x[l]);
            }
            CoarsestSolve::Smoothing => {
                pre_smooth(stencil, &mut work.x[l], &work.b[l], COARSEST_SWEEPS);
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
