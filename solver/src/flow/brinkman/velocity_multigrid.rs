//! The multigrid cycle of one velocity block with its finest level taken from the compact rows
//! ([`MomentumRows`]) instead of a stored stencil.
//!
//! The finest level is the largest: as a stored f32 stencil (seven coefficients, two work vectors) it costs
//! ~36 bytes per unknown, against one link byte per row here and one f32 iterate in red–black split layout. Its
//! red–black Gauss–Seidel sweeps, residual restriction (sum of the children) and piecewise-constant
//! prolongation are those of the stored levels (`crate::linalg::multigrid`), computed row by row from the link
//! bytes in f64; the coarse levels are an ordinary hierarchy of the coarsened block. The iterate is kept as
//! `x̃ = x · d_max/ρ` (d_max the largest diagonal, ρ a power of two near max|r|), O(1) for any SI magnitude.
//! Cycles the rows do not cover (W-cycles, trilinear prolongation, an odd periodic axis that couples a cell to
//! its own colour, a block too small to coarsen) keep the stored finest level.

use super::momentum_rows::MomentumRows;
use crate::linalg::multigrid::{Multigrid, MultigridWork};
use crate::linalg::real::Real;
use crate::linalg::Prolongation;
use crate::linalg::{coarsen_operator, AdvectionScheme, Cycle, FaceCoupledOperator, MultigridParams};
use rayon::prelude::*;

const RED: usize = 0;
const BLACK: usize = 1;

/// One velocity block's preconditioner: z ≈ A⁻¹ r by one V-cycle.
pub(crate) enum VelocityMultigrid {
    /// Every level stored (the general case).
    Stored(Multigrid),
    /// Finest level from the rows, coarse levels stored.
    FromRows {
        coarse: Multigrid,
        coarse_shape: [usize; 3],
        /// Largest diagonal of an active row.
        largest_diagonal: f64,
        /// `1/(S_P + Σ G)` of each active row in split layout (as the iterate): 4 bytes per unknown that spare
        /// every sweep the row's sink and a division.
        inverse_diagonal: [Vec<f32>; 2],
        pre_smoothing: usize,
        post_smoothing: usize,
    },
}

/// Work vectors of one [`VelocityMultigrid`] cycle.
pub(crate) enum VelocityWork {
    Stored(MultigridWork),
    FromRows {
        /// The finest iterate x̃ in split layout `[red, black]`, `lines · ⌈n_x/2⌉` slots each.
        x: [Vec<f32>; 2],
        coarse_r: Vec<f32>,
        coarse_z: Vec<f32>,
        coarse: MultigridWork,
    },
}

impl VelocityMultigrid {
    /// The cycle of block `op` whose compact rows are `rows`; `from_rows` asks for the finest level from the
    /// rows where the cycle allows it.
    pub fn new(
        op: &FaceCoupledOperator,
        rows: &MomentumRows,
        params: &MultigridParams,
        from_rows: bool,
    ) -> Self {
        let shape = op.shape;
        let same_colour_wrap = (0..3).any(|a| op.periodic[a] && shape[a] > 1 && shape[a] % 2 == 1);
        let coarsens = op.sink.len() > params.coarsest_size && shape.iter().any(|&s| s > 1);
        let from_rows = from_rows
            && params.cycle == Cycle::V
            && params.prolongation == Prolongation::Constant
            && params.max_levels >= 2
            && !same_colour_wrap
            && coarsens;
        if !from_rows {
            return VelocityMultigrid::Stored(Multigrid::new(op, AdvectionScheme::Central, params.clone()));
        }
        let coarse_op = coarsen_operator(op);
        let coarse_shape = coarse_op.shape;
        let coarse_params = MultigridParams { max_levels: params.max_levels - 1, ..params.clone() };
        let coarse = Multigrid::new(&coarse_op, AdvectionScheme::Upwind, coarse_params);
        let (inverse_diagonal, largest_diagonal) = inverse_diagonals(rows);
        VelocityMultigrid::FromRows {
            coarse,
            coarse_shape,
            largest_diagonal,
            inverse_diagonal,
            pre_smoothing: params.pre_smoothing,
            post_smoothing: params.post_smoothing,
        }
    }

    pub fn work(&self, rows: &MomentumRows) -> VelocityWork {
        match self {
            VelocityMultigrid::Stored(mg) => VelocityWork::Stored(mg.work()),
            VelocityMultigrid::FromRows { coarse, coarse_shape, .. } => {
                let [sx, sy, sz] = rows.shape;
                let slots = sx.div_ceil(2) * sy * sz;
                let n = coarse_shape.iter().product();
                VelocityWork::FromRows {
                    x: [vec![0.0; slots], vec![0.0; slots]],
                    coarse_r: vec![0.0; n],
                    coarse_z: vec![0.0; n],
                    coarse: coarse.work(),
                }
            }
        }
    }

    /// Bytes held by the stored levels.
    pub fn memory_bytes(&self) -> usize {
        match self {
            VelocityMultigrid::Stored(mg) => mg.memory_bytes(),
            VelocityMultigrid::FromRows { coarse, inverse_diagonal, .. } => {
                coarse.memory_bytes() + 4 * (inverse_diagonal[0].len() + inverse_diagonal[1].len())
            }
        }
    }

    /// Bytes of one [`VelocityWork`] for rows of `unknowns` rows.
    pub fn work_bytes(&self, unknowns: usize) -> usize {
        match self {
            VelocityMultigrid::Stored(mg) => mg.work_bytes(),
            VelocityMultigrid::FromRows { coarse, coarse_shape, .. } => {
                4 * (unknowns + 1) + 8 * coarse_shape.iter().product::<usize>() + coarse.work_bytes()
            }
        }
    }

    /// `z ≈ A⁻¹ r` by one cycle from zero; inactive rows get `z = r`. `r` and `z` are f64 or f32.
    pub fn precondition<T: Real>(&self, rows: &MomentumRows, r: &[T], z: &mut [T], work: &mut VelocityWork) {
        match (self, work) {
            (VelocityMultigrid::Stored(mg), VelocityWork::Stored(w)) => mg.precondition(r, z, w),
            (
                VelocityMultigrid::FromRows {
                    coarse,
                    coarse_shape,
                    largest_diagonal,
                    inverse_diagonal,
                    pre_smoothing,
                    post_smoothing,
                },
                VelocityWork::FromRows { x, coarse_r, coarse_z, coarse: coarse_work },
            ) => {
                let largest = r
                    .par_iter()
                    .enumerate()
                    .with_min_len(8192)
                    .map(|(p, v)| if rows.is_active(p) { v.to_f64().abs() } else { 0.0 })
                    .reduce(|| 0.0, |a, b| if a.is_nan() || b.is_nan() { f64::NAN } else { a.max(b) });
                if largest == 0.0 || !largest.is_finite() {
                    // Zero (or non-finite) input on the active rows: z = 0 there (or r, so that the Krylov
                    // method sees it).
                    z.par_iter_mut().zip(r.par_iter()).enumerate().with_min_len(8192).for_each(
                        |(p, (zi, &ri))| *zi = if rows.is_active(p) && largest == 0.0 { T::ZERO } else { ri },
                    );
                    return;
                }
                // A power of two: the scaling is exact.
                let rho = 2f64.powi(largest.log2().round() as i32);
                let factor = largest_diagonal / rho;
                x.iter_mut().for_each(|c| c.par_iter_mut().with_min_len(8192).for_each(|v| *v = 0.0));
                for _ in 0..*pre_smoothing {
                    sweep(rows, inverse_diagonal, r, factor, x, RED);
                    sweep(rows, inverse_diagonal, r, factor, x, BLACK);
                }
                // After a black sweep only red cells carry a residual (no cell has a neighbour of its colour).
                let residual_colours: &[usize] = if *pre_smoothing > 0 { &[RED] } else { &[RED, BLACK] };
                restrict(rows, inverse_diagonal, r, factor, x, residual_colours, *coarse_shape, coarse_r);
                coarse.precondition(coarse_r, coarse_z, coarse_work);
                // The first post sweep (black) recomputes black cells from red ones only.
                let corrected: &[usize] = if *post_smoothing > 0 { &[RED] } else { &[RED, BLACK] };
                prolongate(rows, *coarse_shape, coarse_z, corrected, x);
                for _ in 0..*post_smoothing {
                    sweep(rows, inverse_diagonal, r, factor, x, BLACK);
                    sweep(rows, inverse_diagonal, r, factor, x, RED);
                }
                let [sx, sy, _] = rows.shape;
                let half = sx.div_ceil(2);
                z.par_chunks_mut(sx).zip(r.par_chunks(sx)).enumerate().with_min_len(16).for_each(
                    |(line, (zl, rl))| {
                        let (j, k) = (line % sy, line / sy);
                        for i in 0..sx {
                            zl[i] = if rows.is_active(line * sx + i) {
                                let value = x[(i + j + k) % 2][line * half + i / 2];
                                T::from_f64(value as f64 / factor)
                            } else {
                                rl[i]
                            };
                        }
                    },
                );
            }
            _ => unreachable!("velocity multigrid and work of different kinds"),
        }
    }
}

/// `1/(S_P + Σ G)` of the active rows in split layout (0 elsewhere) and the largest diagonal (1 if none).
fn inverse_diagonals(rows: &MomentumRows) -> ([Vec<f32>; 2], f64) {
    let [sx, sy, sz] = rows.shape;
    let half = sx.div_ceil(2);
    let mut inverse = [vec![0.0f32; half * sy * sz], vec![0.0f32; half * sy * sz]];
    let [red, black] = &mut inverse;
    let largest = red
        .par_chunks_mut(half)
        .zip(black.par_chunks_mut(half))
        .enumerate()
        .with_min_len(16)
        .map_init(
            || vec![0.0f64; sx],
            |sinks, (line, (red, black))| {
                let (j, k) = (line % sy, line / sy);
                let ll = rows.line_links(line);
                rows.line_sink_values(line, sinks);
                let mut largest = 0.0f64;
                for (i, &sink) in sinks.iter().enumerate() {
                    let byte = rows.byte(line * sx + i);
                    if MomentumRows::byte_is_active(byte) {
                        let (g, _) = rows.links_of(&ll, i, byte);
                        let diagonal = sink + g.iter().sum::<f64>();
                        largest = largest.max(diagonal.abs());
                        let out = if (i + j + k) % 2 == RED { &mut *red } else { &mut *black };
                        out[i / 2] = (1.0 / diagonal) as f32;
                    }
                }
                largest
            },
        )
        .reduce(|| 0.0, f64::max);
    (inverse, if largest > 0.0 && largest.is_finite() { largest } else { 1.0 })
}

/// One Gauss–Seidel sweep over the cells of `colour`: `x̃_P ← (f r_P + Σ G x̃_N) / (S_P + Σ G)`.
fn sweep<T: Real>(
    rows: &MomentumRows,
    inverse_diagonal: &[Vec<f32>; 2],
    r: &[T],
    factor: f64,
    x: &mut [Vec<f32>; 2],
    colour: usize,
) {
    let [sx, sy, _] = rows.shape;
    let half = sx.div_ceil(2);
    let [red, black] = x;
    let (own, other) = if colour == RED { (red, &*black) } else { (black, &*red) };
    own.par_chunks_mut(half)
        .zip(inverse_diagonal[colour].par_chunks(half))
        .enumerate()
        .with_min_len(16)
        .for_each(|(line, (xl, wl))| {
            let (j, k) = (line % sy, line / sy);
            let first = (colour + j + k) % 2;
            let ll = rows.line_links(line);
            let base = line * sx;
            for i in (first..sx).step_by(2) {
                let byte = rows.byte(base + i);
                if !MomentumRows::byte_is_active(byte) {
                    continue;
                }
                let (g, at) = rows.links_of(&ll, i, byte);
                let mut sum = factor * r[base + i].to_f64();
                for n in 0..6 {
                    sum += g[n] * other[at[n].0 * half + at[n].1 / 2] as f64;
                }
                xl[i / 2] = (sum * wl[i / 2] as f64) as f32;
            }
        });
}

/// `coarse_r[I] = Σ_{children P of I} (f r − A x̃)_P` over the fine cells of `colours`.
#[allow(clippy::too_many_arguments)]
fn restrict<T: Real>(
    rows: &MomentumRows,
    inverse_diagonal: &[Vec<f32>; 2],
    r: &[T],
    factor: f64,
    x: &[Vec<f32>; 2],
    colours: &[usize],
    coarse_shape: [usize; 3],
    coarse_r: &mut [f32],
) {
    let [sx, sy, sz] = rows.shape;
    let half = sx.div_ceil(2);
    let cs = coarse_shape;
    coarse_r.par_chunks_mut(cs[0]).enumerate().with_min_len(4).for_each_init(
        || vec![0.0f64; cs[0]],
        |sum, (cline, out)| {
            sum.iter_mut().for_each(|v| *v = 0.0);
            let (jc, kc) = (cline % cs[1], cline / cs[1]);
            for k in 2 * kc..(2 * kc + 2).min(sz) {
                for j in 2 * jc..(2 * jc + 2).min(sy) {
                    let line = j + sy * k;
                    let ll = rows.line_links(line);
                    for &colour in colours {
                        let (own, other) = (&x[colour], &x[1 - colour]);
                        let w = &inverse_diagonal[colour];
                        for i in ((colour + j + k) % 2..sx).step_by(2) {
                            let byte = rows.byte(line * sx + i);
                            if !MomentumRows::byte_is_active(byte) {
                                continue;
                            }
                            let (g, at) = rows.links_of(&ll, i, byte);
                            let slot = line * half + i / 2;
                            // (f r − A x̃)_P = (f r + Σ G x̃_N) − x̃_P / w_P.
                            let mut residual =
                                factor * r[line * sx + i].to_f64() - own[slot] as f64 / w[slot] as f64;
                            for n in 0..6 {
                                residual += g[n] * other[at[n].0 * half + at[n].1 / 2] as f64;
                            }
                            sum[i / 2] += residual;
                        }
                    }
                }
            }
            out.iter_mut().zip(sum.iter()).for_each(|(o, &s)| *o = s as f32);
        },
    );
}

/// `x̃_P += z_c[parent of P]` on the active cells of `colours` (piecewise-constant prolongation).
fn prolongate(
    rows: &MomentumRows,
    coarse_shape: [usize; 3],
    coarse_z: &[f32],
    colours: &[usize],
    x: &mut [Vec<f32>; 2],
) {
    let [sx, sy, _] = rows.shape;
    let half = sx.div_ceil(2);
    let cs = coarse_shape;
    for &colour in colours {
        x[colour].par_chunks_mut(half).enumerate().with_min_len(16).for_each(|(line, xl)| {
            let (j, k) = (line % sy, line / sy);
            let first = (colour + j + k) % 2;
            let parents = &coarse_z[cs[0] * (j / 2 + cs[1] * (k / 2))..];
            for (m, v) in xl.iter_mut().enumerate() {
                let i = first + 2 * m;
                if i < sx && rows.is_active(line * sx + i) {
                    *v += parents[i / 2];
                }
            }
        });
    }
}

#[cfg(test)]
mod tests {
    use super::super::assemble_momentum::{assemble_momentum, MomentumCoefficients};
    use super::super::chamber_velocity::ChamberVelocity;
    use super::super::sphere_index::SphereIndex;
    use super::*;
    use crate::problem::{ChamberBoundaries, ChamberFace};
    use mesh::{Cell, Grid, Layout};
    use std::sync::Arc;

    /// One cycle with the finest level from the rows equals the cycle on the stored levels up to f32 rounding
    /// (the same smoother, transfers and coarse levels), for each component of a chamber with an inlet, an outlet
    /// (half volumes), walls, an even periodic axis and two cut spheres; on one thread and on several alike.
    #[test]
    fn cycle_from_rows_matches_the_stored_cycle() {
        let grid = Grid::new([0.0; 3], 0.1, [14, 11, 8]);
        let layout = Layout {
            cells: vec![
                Cell { id: 0, centre: [0.43, 0.41, 0.3], radius: 0.21, secretion_rate: 0.0 },
                Cell { id: 1, centre: [1.0, 0.7, 0.6], radius: 0.16, secretion_rate: 0.0 },
            ],
        };
        let boundaries = ChamberBoundaries::new([
            [ChamberFace::Inlet, ChamberFace::Outlet],
            [ChamberFace::Wall, ChamberFace::Symmetry],
            [ChamberFace::Periodic; 2],
        ]);
        let spheres = SphereIndex::new(&grid, &layout, boundaries.periodic_axes());
        let inlet = [[Some(vec![1.0; 11 * 8]), None], [None, None], [None, None]];
        let chamber = ChamberVelocity::new(&grid, boundaries, inlet, Arc::new(|_| [1.0, 0.0, 0.0]));
        let coefficients = MomentumCoefficients {
            effective_viscosity: 1.7,
            resistivity: 30.0,
            driving_gradient: 0.0,
            min_wall_fraction: 0.05,
        };
        let params = MultigridParams { coarsest_size: 64, ..MultigridParams::default() };
        for c in 0..3 {
            let block = assemble_momentum(&grid, c, &chamber, &spheres, &coefficients);
            let rows = MomentumRows::new(&block, 1.7, 30.0, 0.1).expect("two conductance values");
            let stored = VelocityMultigrid::new(&block.operator, &rows, &params, false);
            let from_rows = VelocityMultigrid::new(&block.operator, &rows, &params, true);
            assert!(matches!(from_rows, VelocityMultigrid::FromRows { .. }), "component {c}");
            let r: Vec<f32> = (0..rows.len()).map(|p| (((p * 37) % 23) as f32 - 11.0) * 1e-3).collect();
            let cycle = |mg: &VelocityMultigrid| {
                let mut z = vec![0.0f32; r.len()];
                mg.precondition(&rows, &r, &mut z, &mut mg.work(&rows));
                z
            };
            let expected = cycle(&stored);
            let z = cycle(&from_rows);
            let largest = expected.iter().fold(0.0f32, |m, v| m.max(v.abs()));
            assert!(largest > 0.0);
            let worst = z.iter().zip(&expected).fold(0.0f32, |m, (a, b)| m.max((a - b).abs()));
            assert!(worst <= 1e-4 * largest, "c {c}: largest difference {worst:e} of {largest:e}");
            let single = rayon::ThreadPoolBuilder::new().num_threads(1).build().expect("pool");
            let z1 = single.install(|| cycle(&from_rows));
            assert!(z1.iter().zip(&z).all(|(a, b)| a.to_bits() == b.to_bits()), "c {c}: thread count");
        }
    }
}
