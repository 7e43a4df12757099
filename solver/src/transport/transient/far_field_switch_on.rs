//! Far-field chamber faces in time: the Robin condition of DESIGN.md §4 for a point source that switches on
//! at t = 0 in a uniform stream U ê_x with bulk decay k, instead of the steady one.
//!
//! The switched-on field (Hunt 1978; Wexler 1992 [memory]; the formula of validation's
//! `point_source_stream.rs`) is `c = q e^{Ux/2D}/(8πDr) S(r,t)` with
//! `S = e^{−γr} erfc A + e^{γr} erfc B`, `A = (r − vt)/(2√(Dt))`, `B = (r + vt)/(2√(Dt))`, `v = 2Dγ`,
//! `γ = √(U²/4D² + k/D)`. Its strength-free log-gradient (derived here) is
//!
//! `∇ln c = (U/2D) ê_x + (−1/r + ∂_r ln S) r̂`,
//! `∂_r ln S = [γ(e^{2γr} erfc B − erfc A) − (2/√(πDt)) e^{−A²}] / [erfc A + e^{2γr} erfc B]`,
//!
//! using `B² − A² = 2γr` (so both Gaussian terms of ∂_r S coincide) and `e^{2γr} erfc B = e^{−A²} erfcx B`,
//! which keeps every factor finite. As t → ∞, `∂_r ln S → −γ` and the steady condition of
//! `chamber_faces.rs` is recovered exactly; as t → 0⁺ the condition tends to c = 0 on the face.
//! Faces are discretised exactly as the steady ones: `c_f = c_P/(1 − βh/2)`, outflow `(Q_out − D A β) c_f`.
//!
//! With several cells the far field is the superposition of each cell's switched-on field from its own
//! `secretion_start` (`far_field_sources.rs`; cells not yet on carry zero weight). Before any cell is on the
//! condition is the t → 0⁺ limit c_f = 0. Once every source is settled on every far-field face (A ≤ −8 at the
//! farthest face, so `erfc A = 2` and the `e^{2γr} erfc B` term is below 10⁻²⁷ relative) the steady
//! coefficients are reused; with neither flow nor decay (γ = 0) that never happens and each step costs one
//! pass over faces × switched-on cells.

use crate::problem::{ChamberBoundaries, ChamberFace, LigandParameters};
use crate::transport::chamber_faces::{far_field_coefficient, open_chamber_faces, OpenChamberFace};
use crate::transport::far_field_sources::{
    FarFieldMedium, FarFieldPoint, FarFieldSumParams, PointSources, RadialProfile,
};
use mesh::{EmbeddedGeometry, Layout};
use numkit::{erfc, erfcx};
use rayon::prelude::*;

/// The far-field faces of a chamber and the time-dependent coefficients of their outward flux.
#[derive(Clone, Debug)]
pub struct SwitchedOnFarField {
    faces: Vec<OpenChamberFace>,
    sources: PointSources,
    medium: FarFieldMedium,
    /// Coefficients of the steady condition, one per face.
    steady: Vec<f64>,
    /// Time (s) from which every source's switched-on profile equals the steady one to rounding (∞ if never).
    settled_from: f64,
}

impl SwitchedOnFarField {
    /// Collects the far-field faces (the same walk as `chamber_faces::boundary_exchanges`) and the sources,
    /// cell i switching on at `secretion_start[i]` (s).
    pub fn build(
        geometry: &EmbeddedGeometry,
        layout: &Layout,
        boundaries: &ChamberBoundaries,
        ligand: &LigandParameters,
        face_flux: &[Vec<f64>; 3],
        speed: f64,
        secretion_start: &[f64],
    ) -> Self {
        let h = geometry.grid.spacing;
        let faces: Vec<OpenChamberFace> = open_chamber_faces(geometry, boundaries, face_flux)
            .filter(|f| f.kind == ChamberFace::FarField)
            .collect();
        let sources =
            PointSources::new(geometry, layout, boundaries.far_field_sources, Some(secretion_start));
        let medium = FarFieldMedium::new(speed, ligand.diffusivity, ligand.decay_rate, h);
        let points: Vec<FarFieldPoint> = faces
            .iter()
            .map(|f| FarFieldPoint { centre: f.centre, axis: f.axis, outward: f.outward })
            .collect();
        let steady = sources
            .steady_log_gradients(&medium, &points, &FarFieldSumParams::default())
            .into_iter()
            .zip(&faces)
            .map(|(beta, f)| far_field_coefficient(f, medium.diffusivity, beta, h))
            .collect();
        let settled_from = settled_from(&faces, &sources, &medium);
        SwitchedOnFarField { faces, sources, medium, steady, settled_from }
    }

    pub fn is_empty(&self) -> bool {
        self.faces.is_empty()
    }

    /// Adds the outward-flux coefficient of every far-field face (m³/s) to `sink` at time `time` (s; `None`
    /// for the steady condition).
    pub fn add_coefficients(&self, time: Option<f64>, sink: &mut [f64]) {
        for (cell, coefficient) in self.coefficients(time) {
            sink[cell] += coefficient;
        }
    }

    /// `(grid cell, coefficient)` of every far-field face at time `time` (s; `None` for the steady condition):
    /// outflow = coefficient · c_P.
    pub fn coefficients(&self, time: Option<f64>) -> impl Iterator<Item = (usize, f64)> + '_ {
        let values: Vec<f64> = match time {
            Some(t) if t < self.settled_from => self.switched_on(t),
            _ => self.steady.clone(),
        };
        self.faces.iter().zip(values).map(|(f, c)| (f.grid_cell, c))
    }

    fn switched_on(&self, t: f64) -> Vec<f64> {
        let m = &self.medium;
        let h = m.min_distance;
        let starts = self.sources.starts();
        self.faces
            .par_iter()
            .map(|f| {
                let profile = |i: usize, r: f64| {
                    let age = t - starts[i];
                    (age > 0.0).then(|| switched_on_profile(m, r, age))
                };
                match self.sources.log_gradient(m, f.centre, f.axis, f.outward, profile) {
                    Some(beta) => far_field_coefficient(f, m.diffusivity, beta, h),
                    // Limit t → 0⁺ (nothing on yet): β → −∞, c_f = 0 on the face.
                    None => 2.0 * m.diffusivity * f.area / h,
                }
            })
            .collect()
    }
}

/// The switched-on profile `S(r, t) = e^{−γr} erfc A + e^{γr} erfc B` as mantissa · e^{exponent}, and `∂_r ln S`.
fn switched_on_profile(m: &FarFieldMedium, r: f64, t: f64) -> RadialProfile {
    let (d, g) = (m.diffusivity, m.gamma);
    let spread = 2.0 * (d * t).sqrt();
    let a = (r - 2.0 * d * g * t) / spread;
    let b = (r + 2.0 * d * g * t) / spread;
    let gauss_term = 2.0 / (std::f64::consts::PI * d * t).sqrt();
    if a >= 0.0 {
        // Everything carries e^{−A²}: divide it out (e^{γr} e^{−B²} = e^{−γr} e^{−A²}).
        let (xa, xb) = (erfcx(a), erfcx(b));
        RadialProfile {
            exponent: -g * r - a * a,
            mantissa: xa + xb,
            log_slope: (g * (xb - xa) - gauss_term) / (xa + xb),
        }
    } else {
        let e = (-a * a).exp();
        let (ea, eb) = (erfc(a), e * erfcx(b));
        RadialProfile {
            exponent: -g * r,
            mantissa: ea + eb,
            log_slope: (g * (eb - ea) - gauss_term * e) / (ea + eb),
        }
    }
}

/// Earliest time from which every source's profile is settled on every face: `A = (r − vτ)/(2√(Dτ)) ≤ −8` at
/// the farthest face, `v = 2Dγ`, i.e. `√τ = (16√D + √(256 D + 4 v r_max))/(2v)` after its start.
fn settled_from(faces: &[OpenChamberFace], sources: &PointSources, m: &FarFieldMedium) -> f64 {
    let v = 2.0 * m.diffusivity * m.gamma;
    if v <= 0.0 || faces.is_empty() {
        return if faces.is_empty() { f64::NEG_INFINITY } else { f64::INFINITY };
    }
    let root_d = m.diffusivity.sqrt();
    sources
        .centres()
        .par_iter()
        .zip(sources.starts())
        .map(|(c, &start)| {
            let r_max = faces
                .iter()
                .map(|f| {
                    let x = f.centre;
                    ((x[0] - c[0]).powi(2) + (x[1] - c[1]).powi(2) + (x[2] - c[2]).powi(2)).sqrt()
                })
                .fold(0.0, f64::max);
            let root_tau = (16.0 * root_d + (256.0 * m.diffusivity + 4.0 * v * r_max).sqrt()) / (2.0 * v);
            start + root_tau * root_tau
        })
        .reduce(|| f64::NEG_INFINITY, f64::max)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::problem::{FarFieldSources, SurfaceUptake};
    use mesh::{Axis, Cell, Grid};

    fn medium(speed: f64, decay: f64) -> FarFieldMedium {
        FarFieldMedium::new(speed, 1.3, decay, 0.1)
    }

    /// The switched-on S(r, t) directly (small arguments only, no overflow care).
    fn s_direct(m: &FarFieldMedium, r: f64, t: f64) -> f64 {
        let (d, g) = (m.diffusivity, m.gamma);
        let spread = 2.0 * (d * t).sqrt();
        (-g * r).exp() * erfc((r - 2.0 * d * g * t) / spread)
            + (g * r).exp() * erfc((r + 2.0 * d * g * t) / spread)
    }

    /// The closed-form slope equals a finite difference of ln S, and mantissa · e^{exponent} equals S, on both
    /// branches (A ≥ 0 and A < 0).
    #[test]
    fn radial_profile_matches_direct_evaluation() {
        for (speed, decay) in [(0.0, 0.0), (0.7, 0.0), (0.7, 0.2), (0.0, 0.5)] {
            let m = medium(speed, decay);
            for (r, t) in [(0.8, 0.05), (0.8, 1.0), (2.0, 3.0), (1.5, 40.0)] {
                let eps = 1e-5;
                let fd = (s_direct(&m, r + eps, t).ln() - s_direct(&m, r - eps, t).ln()) / (2.0 * eps);
                let p = switched_on_profile(&m, r, t);
                assert!(
                    (fd - p.log_slope).abs() < 1e-7 * (1.0 + fd.abs()),
                    "U {speed} k {decay} r {r} t {t}: {fd} vs {}",
                    p.log_slope
                );
                let s = s_direct(&m, r, t);
                let value = p.mantissa * p.exponent.exp();
                assert!((value - s).abs() < 1e-12 * s, "U {speed} k {decay} r {r} t {t}: {value} vs {s}");
            }
        }
    }

    /// Long times give the steady slope −γ (exponentially with flow or decay).
    #[test]
    fn tends_to_the_steady_condition() {
        let m = medium(0.7, 0.2);
        let late = switched_on_profile(&m, 2.0, 500.0).log_slope;
        assert!((late + m.gamma).abs() < 1e-12, "{late} vs {}", -m.gamma);
    }

    /// A 12³ far-field box (h = 1 µm) with the given cells (centre, secretion rate).
    fn far_field_box(
        cells: &[([f64; 3], f64)],
        mode: FarFieldSources,
        starts: &[f64],
        speed: f64,
    ) -> SwitchedOnFarField {
        let grid = Grid::new([0.0; 3], 1e-6, [12, 12, 12]);
        let layout = Layout {
            cells: cells
                .iter()
                .enumerate()
                .map(|(id, &(centre, q))| Cell { id, centre, radius: 1.2e-6, secretion_rate: q })
                .collect(),
        };
        let geometry = EmbeddedGeometry::build(&grid, &layout, [false; 3]);
        let mut boundaries = ChamberBoundaries::new([[ChamberFace::FarField; 2]; 3]);
        boundaries.far_field_sources = mode;
        let ligand = LigandParameters {
            diffusivity: 1e-10,
            decay_rate: 1e-2,
            inlet_concentration: 0.0,
            uptake: SurfaceUptake::None,
        };
        let flux = Axis::ALL.map(|axis| vec![0.0; grid.face_count(axis)]);
        SwitchedOnFarField::build(&geometry, &layout, &boundaries, &ligand, &flux, speed, starts)
    }

    fn coefficients(ff: &SwitchedOnFarField, time: Option<f64>) -> Vec<f64> {
        ff.coefficients(time).map(|(_, c)| c).collect()
    }

    fn assert_close(a: &[f64], b: &[f64], tolerance: f64, what: &str) {
        assert_eq!(a.len(), b.len());
        for (x, y) in a.iter().zip(b) {
            assert!((x - y).abs() <= tolerance * y.abs().max(1e-30), "{what}: {x} vs {y}");
        }
    }

    /// One cell: the superposition is the centroid form at every time, and both are c_f = 0 before it starts.
    #[test]
    fn one_cell_is_the_centroid_form_in_time() {
        let cell = [([5.3e-6, 6.1e-6, 4.4e-6], 2.0)];
        let by_cells = far_field_box(&cell, FarFieldSources::Cells, &[10.0], 3e-6);
        let by_centroid = far_field_box(&cell, FarFieldSources::Centroid, &[10.0], 3e-6);
        for time in [Some(5.0), Some(10.0), Some(10.01), Some(10.5), Some(30.0), None] {
            let (a, b) = (coefficients(&by_cells, time), coefficients(&by_centroid, time));
            assert_close(&a, &b, 1e-12, &format!("time {time:?}"));
        }
        let before = coefficients(&by_cells, Some(9.0));
        assert!(by_cells.faces.iter().zip(&before).all(|(f, &c)| c == 2.0 * 1e-10 * f.area / 1e-6));
    }

    /// Two cells switching on at different times: while only the first is on, the far field is that of the
    /// first alone; once both are on and settled, it is the steady superposition.
    #[test]
    fn cells_not_yet_on_carry_no_weight() {
        let (first, second) = (([3.3e-6, 6.1e-6, 4.4e-6], 1.0), ([8.7e-6, 5.2e-6, 7.9e-6], 3.0));
        let both = far_field_box(&[first, second], FarFieldSources::Cells, &[0.0, 20.0], 3e-6);
        let alone = far_field_box(&[first], FarFieldSources::Cells, &[0.0], 3e-6);
        for t in [0.5, 5.0, 19.9] {
            let (a, b) = (coefficients(&both, Some(t)), coefficients(&alone, Some(t)));
            assert_close(&a, &b, 1e-12, &format!("t = {t}"));
        }
        let after = coefficients(&both, Some(20.5));
        let first_only = coefficients(&alone, Some(20.5));
        assert!(after.iter().zip(&first_only).any(|(a, b)| (a - b).abs() > 1e-6 * b.abs()));
        // Just before the settled time the computed coefficients already equal the steady ones.
        assert!(both.settled_from.is_finite() && both.settled_from > 20.0);
        let computed = both.switched_on(both.settled_from * (1.0 - 1e-9));
        assert_close(&computed, &coefficients(&both, None), 1e-12, "settled");
    }
}
