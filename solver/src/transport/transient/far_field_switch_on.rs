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

use super::error_function::{erfc, erfcx};
use crate::problem::{ChamberBoundaries, ChamberFace, LigandParameters};
use crate::transport::chamber_faces::source_centroid;
use mesh::{Axis, EmbeddedGeometry, Layout};

/// One far-field boundary grid face.
#[derive(Clone, Debug)]
struct FarFieldFace {
    grid_cell: usize,
    /// Open area (m²).
    area: f64,
    /// Volumetric flux leaving through the face (m³/s).
    q_out: f64,
    /// `ê_x · n` and `r̂ · n` of the face centre, and its distance r from the source centroid (m).
    ex_dot_n: f64,
    r_dot_n: f64,
    r: f64,
}

/// The far-field faces of a chamber and the time-dependent coefficients of their outward flux.
#[derive(Clone, Debug)]
pub struct SwitchedOnFarField {
    faces: Vec<FarFieldFace>,
    diffusivity: f64,
    speed: f64,
    gamma: f64,
    spacing: f64,
}

impl SwitchedOnFarField {
    /// Collects the far-field faces (same faces, order and geometry as `chamber_faces::boundary_exchanges`).
    pub fn build(
        geometry: &EmbeddedGeometry,
        layout: &Layout,
        boundaries: &ChamberBoundaries,
        ligand: &LigandParameters,
        face_flux: &[Vec<f64>; 3],
        speed: f64,
    ) -> Self {
        let grid = &geometry.grid;
        let h = grid.spacing;
        let d = ligand.diffusivity;
        let centroid = source_centroid(geometry, layout);
        let gamma = (speed.powi(2) / (4.0 * d * d) + ligand.decay_rate / d).sqrt();
        let mut faces = Vec::new();
        for axis in Axis::ALL {
            let a = axis.index();
            let (b, c) = ((a + 1) % 3, (a + 2) % 3);
            for side in 0..2 {
                if boundaries.faces[a][side] != ChamberFace::FarField {
                    continue;
                }
                let outward = if side == 0 { -1.0 } else { 1.0 };
                let layer = if side == 0 { 0 } else { grid.shape[a] - 1 };
                let face_layer = if side == 0 { 0 } else { grid.shape[a] };
                for v in 0..grid.shape[c] {
                    for u in 0..grid.shape[b] {
                        let mut cell = [0usize; 3];
                        cell[a] = layer;
                        cell[b] = u;
                        cell[c] = v;
                        let mut face = cell;
                        face[a] = face_layer;
                        let fi = grid.face_index(axis, face[0], face[1], face[2]);
                        let area = geometry.aperture[a][fi] * h * h;
                        if area == 0.0 {
                            continue;
                        }
                        let mut x = grid.cell_centre(cell[0], cell[1], cell[2]);
                        x[a] += outward * 0.5 * h;
                        let rvec = [0, 1, 2].map(|m| x[m] - centroid[m]);
                        let r = (rvec[0].powi(2) + rvec[1].powi(2) + rvec[2].powi(2)).sqrt().max(h);
                        faces.push(FarFieldFace {
                            grid_cell: grid.index(cell[0], cell[1], cell[2]),
                            area,
                            q_out: outward * face_flux[a][fi],
                            ex_dot_n: if a == 0 { outward } else { 0.0 },
                            r_dot_n: outward * rvec[a] / r,
                            r,
                        });
                    }
                }
            }
        }
        SwitchedOnFarField { faces, diffusivity: d, speed, gamma, spacing: h }
    }

    pub fn is_empty(&self) -> bool {
        self.faces.is_empty()
    }

    /// `∂_r ln S` of the switched-on field at distance r (m) and source age t (s); `None` = steady (−γ).
    fn radial_log_slope(&self, r: f64, age: Option<f64>) -> f64 {
        let Some(t) = age else { return -self.gamma };
        let d = self.diffusivity;
        let g = self.gamma;
        let spread = 2.0 * (d * t).sqrt();
        let a = (r - 2.0 * d * g * t) / spread;
        let b = (r + 2.0 * d * g * t) / spread;
        let gauss_term = 2.0 / (std::f64::consts::PI * d * t).sqrt();
        if a >= 0.0 {
            // Everything carries e^{−A²}: divide it out.
            let (xa, xb) = (erfcx(a), erfcx(b));
            (g * (xb - xa) - gauss_term) / (xa + xb)
        } else {
            let e = (-a * a).exp();
            let (ea, eb) = (erfc(a), e * erfcx(b));
            (g * (eb - ea) - gauss_term * e) / (ea + eb)
        }
    }

    /// Adds the outward-flux coefficient of every far-field face (m³/s) to `sink` for sources of age `age`
    /// (s since secretion started; `None` for the steady condition, `Some(t ≤ 0)` before any secretion).
    pub fn add_coefficients(&self, age: Option<f64>, sink: &mut [f64]) {
        for (cell, coefficient) in self.coefficients(age) {
            sink[cell] += coefficient;
        }
    }

    /// `(grid cell, coefficient)` of every far-field face: outflow = coefficient · c_P.
    pub fn coefficients(&self, age: Option<f64>) -> impl Iterator<Item = (usize, f64)> + '_ {
        let d = self.diffusivity;
        let h = self.spacing;
        self.faces.iter().map(move |f| {
            if matches!(age, Some(t) if t <= 0.0) {
                // Limit t → 0⁺: β → −∞, c_f = 0 on the face.
                return (f.grid_cell, 2.0 * d * f.area / h);
            }
            let slope = self.radial_log_slope(f.r, age);
            let beta = self.speed / (2.0 * d) * f.ex_dot_n + (slope - 1.0 / f.r) * f.r_dot_n;
            let to_face = 1.0 / (1.0 - 0.5 * beta * h).max(0.25);
            (f.grid_cell, (f.q_out - d * f.area * beta) * to_face)
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn far_field(speed: f64, decay: f64) -> SwitchedOnFarField {
        let d: f64 = 1.3;
        SwitchedOnFarField {
            faces: Vec::new(),
            diffusivity: d,
            speed,
            gamma: (speed * speed / (4.0 * d * d) + decay / d).sqrt(),
            spacing: 0.1,
        }
    }

    /// The switched-on S(r, t) directly (small arguments only, no overflow care).
    fn s_direct(ff: &SwitchedOnFarField, r: f64, t: f64) -> f64 {
        let d = ff.diffusivity;
        let g = ff.gamma;
        let spread = 2.0 * (d * t).sqrt();
        (-g * r).exp() * erfc((r - 2.0 * d * g * t) / spread)
            + (g * r).exp() * erfc((r + 2.0 * d * g * t) / spread)
    }

    /// The closed-form slope equals a finite difference of ln S, on both branches (A ≥ 0 and A < 0).
    #[test]
    fn radial_slope_matches_finite_difference() {
        for (speed, decay) in [(0.0, 0.0), (0.7, 0.0), (0.7, 0.2), (0.0, 0.5)] {
            let ff = far_field(speed, decay);
            for (r, t) in [(0.8, 0.05), (0.8, 1.0), (2.0, 3.0), (1.5, 40.0)] {
                let eps = 1e-5;
                let fd = ((s_direct(&ff, r + eps, t)).ln() - (s_direct(&ff, r - eps, t)).ln()) / (2.0 * eps);
                let closed = ff.radial_log_slope(r, Some(t));
                assert!(
                    (fd - closed).abs() < 1e-7 * (1.0 + fd.abs()),
                    "U {speed} k {decay} r {r} t {t}: {fd} vs {closed}"
                );
            }
        }
    }

    /// Long times give the steady slope −γ (exponentially with flow or decay).
    #[test]
    fn tends_to_the_steady_condition() {
        let ff = far_field(0.7, 0.2);
        let late = ff.radial_log_slope(2.0, Some(500.0));
        assert!((late + ff.gamma).abs() < 1e-12, "{late} vs {}", -ff.gamma);
    }
}
