//! The point sources a far-field chamber face assumes outside the chamber, and the log-gradient of their
//! superposed field there (the Robin coefficient β of `∂c/∂n = β c`).
//!
//! Each source i (strength q_i, centre x_i) has the field of a point source in a uniform stream U ê_x with
//! bulk decay k (Rosenthal 1946; Carslaw & Jaeger 1959 §10.7 [memory]):
//! `c_i = q_i e^{U(x − x_i)/2D} R(r_i)/r_i`, with `R = e^{−γr}` when steady (`γ = √(U²/4D² + k/D)`) and the
//! switched-on `R = S(r, t − t_i)` of `transient/far_field_switch_on.rs` in time. The superposition
//! `c∞ = Σ_i c_i` gives
//!
//! `β = ∂_n c∞ / c∞ = (U/2D) ê_x·n + Σ_i w_i (∂_r ln R(r_i) − 1/r_i) r̂_i·n`,  `w_i = c_i / Σ_j c_j`,
//!
//! which depends on the strengths only through their ratios (the secretion rates, known inputs), so the condition
//! stays linear in c and strength-free overall. For one source it is the DESIGN.md §4 form. The weights are
//! evaluated with the largest exponent factored out (a running maximum), so neither `e^{Ux/2D}` nor `e^{−γr}`
//! can overflow or underflow to a 0/0.
//!
//! Cost: the direct sum takes one square root and one exponential per (face, source) pair (about 13 ns of CPU
//! per pair, bench/RECORDS.md). Steady coefficients of many pairs (`FarFieldSumParams::direct_below_pairs`)
//! are summed side by side by `far_field_patches.rs` instead, at a cost growing as (faces + sources) × log and
//! with a relative error of β − (U/2D) ê_x·n at most `2 ε/(1 − ε)`, ε = `PatchSumParams::tolerance` (the bound
//! is derived there); below that count, and on a side the patch sums cannot take (a source beyond the side,
//! exponents beyond ±300), the direct sum gives exactly its old numbers. The switched-on form of transient runs
//! stays a direct sum, one pass over faces × switched-on sources per time step until every source has settled
//! (never without flow and decay). `[boundaries] far_field_sources = "centroid"` costs one pair per face.

use super::far_field_patches::{side_sums, PatchSumParams, Side, SideSources};
use crate::problem::FarFieldSources;
use mesh::{EmbeddedGeometry, Layout};
use rayon::prelude::*;

/// When the steady far-field sums are taken by patches instead of directly.
#[derive(Clone, Copy, Debug)]
pub struct FarFieldSumParams {
    /// Below this many (face, source) pairs the direct sum is used (so small cases keep their numbers).
    pub direct_below_pairs: f64,
    pub patches: PatchSumParams,
}

impl Default for FarFieldSumParams {
    fn default() -> Self {
        FarFieldSumParams { direct_below_pairs: 5e7, patches: PatchSumParams::default() }
    }
}

/// A far-field face as the sums see it: centre (m) and outward normal `outward ê_axis`.
#[derive(Clone, Copy, Debug)]
pub struct FarFieldPoint {
    pub centre: [f64; 3],
    pub axis: usize,
    pub outward: f64,
}

/// Largest exponent magnitude the patch sums accept in their unscaled weights and kernels.
const PATCH_EXPONENT_LIMIT: f64 = 300.0;

/// The far-field sources of a chamber: centres, relative strengths and switch-on times.
#[derive(Clone, Debug)]
pub struct PointSources {
    centres: Vec<[f64; 3]>,
    /// Secretion rates divided by the largest one (all > 0).
    strengths: Vec<f64>,
    /// Time each source switches on (s); only the switched-on form reads it.
    starts: Vec<f64>,
}

/// One source's radial profile R at distance r: `R = mantissa · e^{exponent}` and `∂_r ln R`.
#[derive(Clone, Copy, Debug)]
pub struct RadialProfile {
    pub exponent: f64,
    pub mantissa: f64,
    pub log_slope: f64,
}

/// The undisturbed stream and the medium as the far field sees them.
#[derive(Clone, Copy, Debug)]
pub struct FarFieldMedium {
    /// U (m/s) along +x.
    pub speed: f64,
    /// D (m²/s).
    pub diffusivity: f64,
    /// γ = √(U²/4D² + k/D) (1/m).
    pub gamma: f64,
    /// Smallest distance used for r (m): the grid spacing, so a source on a face cannot divide by zero.
    pub min_distance: f64,
}

impl FarFieldMedium {
    pub fn new(speed: f64, diffusivity: f64, decay_rate: f64, spacing: f64) -> Self {
        let gamma = (speed * speed / (4.0 * diffusivity * diffusivity) + decay_rate / diffusivity).sqrt();
        FarFieldMedium { speed, diffusivity, gamma, min_distance: spacing }
    }

    /// The steady profile `R = e^{−γr}`.
    pub fn steady_profile(&self, r: f64) -> RadialProfile {
        RadialProfile { exponent: -self.gamma * r, mantissa: 1.0, log_slope: -self.gamma }
    }
}

/// Point from which far-field distances are measured in the DESIGN.md §4 form: the secretion-weighted centroid
/// of the cells, or the chamber centre when nothing is secreted.
pub fn source_centroid(geometry: &EmbeddedGeometry, layout: &Layout) -> [f64; 3] {
    let total: f64 = layout.cells.iter().map(|c| c.secretion_rate).sum();
    if total > 0.0 {
        let mut x = [0.0; 3];
        for cell in &layout.cells {
            for (a, xa) in x.iter_mut().enumerate() {
                *xa += cell.secretion_rate * cell.centre[a] / total;
            }
        }
        x
    } else {
        let g = &geometry.grid;
        [0, 1, 2].map(|a| g.origin[a] + 0.5 * g.shape[a] as f64 * g.spacing)
    }
}

impl PointSources {
    /// The sources of `layout` as `mode` says. `secretion_start` (one per cell, s) gives the switch-on times;
    /// `None` means all at 0. The centroid form is one source starting with the earliest cell; without any
    /// secreting cell it is one source at the chamber centre (as the centroid form always was).
    pub fn new(
        geometry: &EmbeddedGeometry,
        layout: &Layout,
        mode: FarFieldSources,
        secretion_start: Option<&[f64]>,
    ) -> Self {
        let start_of = |i: usize| secretion_start.and_then(|s| s.get(i).copied()).unwrap_or(0.0);
        let secreting: Vec<usize> = (0..layout.cells.len())
            .filter(|&i| layout.cells[i].secretion_rate > 0.0 && layout.cells[i].secretion_rate.is_finite())
            .collect();
        if mode == FarFieldSources::Centroid || secreting.is_empty() {
            let earliest = (0..layout.cells.len()).map(start_of).fold(f64::INFINITY, f64::min);
            return PointSources {
                centres: vec![source_centroid(geometry, layout)],
                strengths: vec![1.0],
                starts: vec![if earliest.is_finite() { earliest } else { 0.0 }],
            };
        }
        let largest = secreting.iter().map(|&i| layout.cells[i].secretion_rate).fold(0.0, f64::max);
        PointSources {
            centres: secreting.iter().map(|&i| layout.cells[i].centre).collect(),
            strengths: secreting.iter().map(|&i| layout.cells[i].secretion_rate / largest).collect(),
            starts: secreting.iter().map(|&i| start_of(i)).collect(),
        }
    }

    pub fn len(&self) -> usize {
        self.centres.len()
    }

    pub fn is_empty(&self) -> bool {
        self.centres.is_empty()
    }

    pub fn centres(&self) -> &[[f64; 3]] {
        &self.centres
    }

    pub fn starts(&self) -> &[f64] {
        &self.starts
    }

    /// β at the face centre `x` with outward normal `outward ê_axis`, for source profiles given by
    /// `profile(source index, r)` (`None`: that source is not on yet). `None` when no source is on.
    pub fn log_gradient(
        &self,
        medium: &FarFieldMedium,
        x: [f64; 3],
        axis: usize,
        outward: f64,
        profile: impl Fn(usize, f64) -> Option<RadialProfile>,
    ) -> Option<f64> {
        let ex_dot_n = if axis == 0 { outward } else { 0.0 };
        let drift = medium.speed / (2.0 * medium.diffusivity);
        let along = drift * ex_dot_n;
        let geometry_of = |i: usize| {
            let c = self.centres[i];
            let rvec = [x[0] - c[0], x[1] - c[1], x[2] - c[2]];
            let r = (rvec[0].powi(2) + rvec[1].powi(2) + rvec[2].powi(2)).sqrt().max(medium.min_distance);
            (rvec, r, outward * rvec[axis] / r)
        };
        if self.centres.len() == 1 {
            // One source: its own log-gradient, the DESIGN.md §4 form term for term.
            let (_, r, r_dot_n) = geometry_of(0);
            let p = profile(0, r)?;
            return Some(along + (p.log_slope - 1.0 / r) * r_dot_n);
        }
        // Running maximum of the exponents: every weight is exp(E_i − top) ≤ 1 times a modest amplitude.
        let (mut top, mut total, mut radial) = (f64::NEG_INFINITY, 0.0, 0.0);
        for i in 0..self.centres.len() {
            let (rvec, r, r_dot_n) = geometry_of(i);
            let Some(p) = profile(i, r) else { continue };
            let exponent = drift * rvec[0] + p.exponent;
            if exponent > top {
                let rescale = (top - exponent).exp();
                total *= rescale;
                radial *= rescale;
                top = exponent;
            }
            let weight = self.strengths[i] * p.mantissa / r * (exponent - top).exp();
            total += weight;
            radial += weight * (p.log_slope - 1.0 / r) * r_dot_n;
        }
        (total > 0.0).then(|| along + radial / total)
    }

    /// Steady β (all sources on, `R = e^{−γr}`).
    pub fn steady_log_gradient(
        &self,
        medium: &FarFieldMedium,
        x: [f64; 3],
        axis: usize,
        outward: f64,
    ) -> f64 {
        self.log_gradient(medium, x, axis, outward, |_, r| Some(medium.steady_profile(r))).unwrap_or(f64::NAN)
    }

    /// Steady β at every point of `points` (far-field faces of a grid of spacing `medium.min_distance`):
    /// directly below `params.direct_below_pairs` pairs, else side by side by patches where a side allows.
    pub fn steady_log_gradients(
        &self,
        medium: &FarFieldMedium,
        points: &[FarFieldPoint],
        params: &FarFieldSumParams,
    ) -> Vec<f64> {
        let direct = |p: &FarFieldPoint| self.steady_log_gradient(medium, p.centre, p.axis, p.outward);
        if self.len() < 2 || (self.len() as f64) * (points.len() as f64) < params.direct_below_pairs {
            return points.par_iter().map(direct).collect();
        }
        let mut betas = vec![f64::NAN; points.len()];
        for axis in 0..3 {
            for outward in [-1.0, 1.0] {
                let on_side: Vec<usize> = (0..points.len())
                    .filter(|&i| points[i].axis == axis && points[i].outward == outward)
                    .collect();
                if on_side.is_empty() {
                    continue;
                }
                let side_points: Vec<[f64; 3]> = on_side.iter().map(|&i| points[i].centre).collect();
                let side_betas = self
                    .side_log_gradients(medium, axis, outward, &side_points, &params.patches)
                    .unwrap_or_else(|| on_side.par_iter().map(|&i| direct(&points[i])).collect());
                for (&i, beta) in on_side.iter().zip(side_betas) {
                    betas[i] = beta;
                }
            }
        }
        betas
    }

    /// β on one side by `far_field_patches.rs`; `None` where that side needs the direct sum.
    fn side_log_gradients(
        &self,
        medium: &FarFieldMedium,
        axis: usize,
        outward: f64,
        points: &[[f64; 3]],
        params: &PatchSumParams,
    ) -> Option<Vec<f64>> {
        let position = points.first()?[axis];
        let depths: Vec<f64> = self.centres.iter().map(|c| outward * (position - c[axis])).collect();
        if depths.iter().any(|&d| d < 0.0) {
            return None;
        }
        let drift = medium.speed / (2.0 * medium.diffusivity);
        let extent = |a: usize| {
            let all = self.centres.iter().map(|c| c[a]).chain(points.iter().map(|x| x[a]));
            let (lo, hi) = all.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| (lo.min(v), hi.max(v)));
            hi - lo
        };
        let diagonal = (extent(0).powi(2) + extent(1).powi(2) + extent(2).powi(2)).sqrt();
        let x_ref = self.centres.iter().map(|c| c[0]).fold(f64::NEG_INFINITY, f64::max);
        if drift.abs() * extent(0) > PATCH_EXPONENT_LIMIT || medium.gamma * diagonal > PATCH_EXPONENT_LIMIT {
            return None;
        }
        // q̃_i = q_i e^{(U/2D)(x_ref − x_i)}: the target's e^{U(x − x_ref)/2D} cancels in β.
        let weights: Vec<f64> = self
            .centres
            .iter()
            .zip(&self.strengths)
            .map(|(c, q)| q * (drift * (x_ref - c[0])).exp())
            .collect();
        let depth_weights: Vec<f64> = weights.iter().zip(&depths).map(|(w, d)| w * d).collect();
        let sources =
            SideSources { centres: &self.centres, weights: &weights, depth_weights: &depth_weights };
        let sums = side_sums(
            &sources,
            Side { axis, position },
            points,
            medium.min_distance,
            medium.gamma,
            medium.min_distance,
            params,
        )?;
        let along = if axis == 0 { drift * outward } else { 0.0 };
        let betas: Vec<f64> = sums.iter().map(|&[phi, psi]| along - psi / phi).collect();
        betas.iter().all(|b| b.is_finite()).then_some(betas)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::transport::far_field_patches::PatchSumParams;
    use mesh::{Cell, Grid};

    fn medium(speed: f64, decay: f64) -> FarFieldMedium {
        FarFieldMedium::new(speed, 1e-10, decay, 1e-6)
    }

    fn sources(cells: &[([f64; 3], f64)], mode: FarFieldSources) -> PointSources {
        let grid = Grid::new([0.0; 3], 1e-6, [4, 4, 4]);
        let layout = Layout {
            cells: cells
                .iter()
                .enumerate()
                .map(|(id, &(centre, q))| Cell { id, centre, radius: 1e-6, secretion_rate: q })
                .collect(),
        };
        let geometry = EmbeddedGeometry::build(&grid, &layout, [false; 3]);
        PointSources::new(&geometry, &layout, mode, None)
    }

    /// The superposed field directly, for a finite-difference check (moderate exponents only).
    fn field(s: &PointSources, m: &FarFieldMedium, x: [f64; 3]) -> f64 {
        (0..s.len())
            .map(|i| {
                let c = s.centres[i];
                let r = ((x[0] - c[0]).powi(2) + (x[1] - c[1]).powi(2) + (x[2] - c[2]).powi(2)).sqrt();
                s.strengths[i] * (m.speed / (2.0 * m.diffusivity) * (x[0] - c[0]) - m.gamma * r).exp() / r
            })
            .sum()
    }

    /// β is the log-derivative of Σ q_i G(x − x_i) along the outward normal, on every kind of face.
    #[test]
    fn superposed_log_gradient_matches_finite_difference() {
        let s = sources(
            &[([10e-6, 20e-6, 5e-6], 1.0), ([30e-6, 22e-6, 9e-6], 3.0), ([18e-6, 2e-6, 30e-6], 0.5)],
            FarFieldSources::Cells,
        );
        for (speed, decay) in [(0.0, 0.0), (3e-6, 0.0), (1e-5, 1e-3)] {
            let m = medium(speed, decay);
            for (x, axis, outward) in [
                ([80e-6, 15e-6, 12e-6], 0, 1.0),
                ([-40e-6, 25e-6, 2e-6], 0, -1.0),
                ([20e-6, 60e-6, 0.0], 1, 1.0),
            ] {
                let eps = 1e-9;
                let mut plus = x;
                let mut minus = x;
                plus[axis] += outward * eps;
                minus[axis] -= outward * eps;
                let fd = (field(&s, &m, plus).ln() - field(&s, &m, minus).ln()) / (2.0 * eps);
                let beta = s.steady_log_gradient(&m, x, axis, outward);
                assert!((fd - beta).abs() < 1e-6 * fd.abs().max(1e4), "U {speed} k {decay}: {fd} vs {beta}");
            }
        }
    }

    /// One cell: the superposition is today's centroid form, `(U/2D) ê_x·n − (1/r + γ) r̂·n`, to rounding.
    #[test]
    fn one_cell_is_the_centroid_form() {
        let centre = [12.3e-6, 7.7e-6, 21.1e-6];
        let cells = sources(&[(centre, 2.5)], FarFieldSources::Cells);
        let centroid = sources(&[(centre, 2.5)], FarFieldSources::Centroid);
        for (speed, decay) in [(0.0, 0.0), (2e-6, 1e-4)] {
            let m = medium(speed, decay);
            for (x, axis, outward) in [([100e-6, 3e-6, 40e-6], 0, 1.0), ([50e-6, -20e-6, 40e-6], 1, -1.0)] {
                let rvec = [0, 1, 2].map(|a| x[a] - centre[a]);
                let r = (rvec[0].powi(2) + rvec[1].powi(2) + rvec[2].powi(2)).sqrt();
                let ex_dot_n = if axis == 0 { outward } else { 0.0 };
                let today =
                    speed / (2.0 * 1e-10) * ex_dot_n - (1.0 / r + m.gamma) * (outward * rvec[axis] / r);
                let by_cells = cells.steady_log_gradient(&m, x, axis, outward);
                let by_centroid = centroid.steady_log_gradient(&m, x, axis, outward);
                assert_eq!(by_cells.to_bits(), today.to_bits(), "{by_cells} vs {today}");
                assert!((by_centroid - today).abs() <= 1e-13 * today.abs(), "{by_centroid} vs {today}");
            }
        }
    }

    /// Far downstream of two sources with huge e^{Ux/2D} and tiny e^{−γr} factors: finite, and between the
    /// two single-source values (a weighted mean of them).
    #[test]
    fn no_overflow_far_from_strong_drift() {
        let a = ([0.0, 0.0, 0.0], 1.0);
        let b = ([0.0, 5e-4, 0.0], 1.0);
        let m = medium(1e-4, 0.0); // U/2D = 5e5 /m: e^{Ux/2D} overflows beyond x ≈ 1.4 mm.
        let x = [5e-3, 1e-3, 0.0];
        let both = sources(&[a, b], FarFieldSources::Cells).steady_log_gradient(&m, x, 1, 1.0);
        let only_a = sources(&[a], FarFieldSources::Cells).steady_log_gradient(&m, x, 1, 1.0);
        let only_b = sources(&[b], FarFieldSources::Cells).steady_log_gradient(&m, x, 1, 1.0);
        assert!(both.is_finite());
        assert!(
            both >= only_a.min(only_b) && both <= only_a.max(only_b),
            "{both} not in [{only_a}, {only_b}]"
        );
    }

    /// Cells that do not secrete are not sources; without any secretion the chamber centre is the one source.
    #[test]
    fn silent_cells_are_not_sources() {
        let s = sources(&[([1e-6, 1e-6, 1e-6], 0.0), ([3e-6, 1e-6, 1e-6], 2.0)], FarFieldSources::Cells);
        assert_eq!(s.centres(), &[[3e-6, 1e-6, 1e-6]]);
        let s = sources(&[([1e-6, 1e-6, 1e-6], 0.0)], FarFieldSources::Cells);
        assert_eq!(s.centres(), &[[2e-6, 2e-6, 2e-6]]);
    }

    /// Random layouts in a box with far-field faces on every side: the patch sums give β within the stated
    /// bound of the direct sum on every face (relative error of β − (U/2D) ê_x·n ≤ 2ε/(1 − ε)).
    #[test]
    fn patch_sums_match_the_direct_sum_within_the_bound() {
        let mut rng = numkit::Xoshiro256StarStar::seed_from_u64(7);
        let mut next = move || rng.next_f64();
        let (h, n) = (1e-6, 48usize);
        let side = n as f64 * h;
        let mut points = Vec::new();
        for axis in 0..3 {
            for (outward, position) in [(-1.0, 0.0), (1.0, side)] {
                for i in 0..n {
                    for j in 0..n {
                        let mut centre = [0.0; 3];
                        centre[axis] = position;
                        centre[(axis + 1) % 3] = (i as f64 + 0.5) * h;
                        centre[(axis + 2) % 3] = (j as f64 + 0.5) * h;
                        points.push(FarFieldPoint { centre, axis, outward });
                    }
                }
            }
        }
        for (count, speed, decay, tolerance, degree) in [
            (200, 0.0, 0.0, 1e-9, 12),
            (300, 3e-5, 1e-2, 1e-9, 12),
            (300, 1e-5, 0.0, 1e-5, 6),
            (400, 1e-6, 1e-4, 1e-8, 16),
        ] {
            let cells: Vec<([f64; 3], f64)> =
                (0..count).map(|_| ([next() * side, next() * side, next() * side], 0.2 + next())).collect();
            let s = sources(&cells, FarFieldSources::Cells);
            let m = FarFieldMedium::new(speed, 1e-10, decay, h);
            let params = FarFieldSumParams {
                direct_below_pairs: 0.0,
                patches: PatchSumParams { tolerance, degree, ..PatchSumParams::default() },
            };
            for axis in 0..3 {
                for outward in [-1.0, 1.0] {
                    let side_points: Vec<[f64; 3]> = points
                        .iter()
                        .filter(|p| p.axis == axis && p.outward == outward)
                        .map(|p| p.centre)
                        .collect();
                    assert!(s.side_log_gradients(&m, axis, outward, &side_points, &params.patches).is_some());
                }
            }
            let fast = s.steady_log_gradients(&m, &points, &params);
            let bound = 2.0 * tolerance / (1.0 - tolerance);
            let mut worst: f64 = 0.0;
            for (p, b) in points.iter().zip(&fast) {
                let direct = s.steady_log_gradient(&m, p.centre, p.axis, p.outward);
                let along = if p.axis == 0 { speed / 2e-10 * p.outward } else { 0.0 };
                worst = worst.max((b - direct).abs() / (direct - along).abs());
            }
            assert!(worst <= bound, "{count} cells, U {speed}: worst {worst:e} > bound {bound:e}");
            assert!(worst > 0.0, "the patch sums were not used");
        }
    }
}
