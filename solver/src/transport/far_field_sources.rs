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
//! Cost: one square root and one exponential per (face, source) pair, parallel over faces (about 13 ns of CPU
//! per pair, bench/RECORDS.md), so 10⁴ cells × 10⁶ far-field faces cost minutes of CPU once per steady
//! assembly — and per time step in switched-on transient runs until every source has settled (never without
//! flow and decay). For such layouts
//! `[boundaries] far_field_sources = "centroid"` costs one pair per face.

use crate::problem::FarFieldSources;
use mesh::{EmbeddedGeometry, Layout};

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
}

#[cfg(test)]
mod tests {
    use super::*;
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
}
