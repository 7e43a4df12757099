//! Darcy flow past an impermeable sphere (shared/REFERENCES.md item B, Darcy limit).
//!
//! With `u = −(K/μ)∇p`, `∇²p = 0` and `∂p/∂r = 0` at r = a the flow is the inviscid potential flow past a
//! sphere: Lamb, *Hydrodynamics* (6th ed. 1932, §92) [memory]; Batchelor (1967, §6.8) [memory].
//!
//! `Φ = U cosθ (r + a³/(2r²))`, `u = ∇Φ`, `p = p∞ − (μ/K)Φ`,
//! `u_r = U cosθ (1 − a³/r³)`, `u_θ = −U sinθ (1 + a³/(2r³))` (slip: |u_θ| = 1.5U at the equator),
//!
//! θ measured from the downstream direction. The drag is `2πμa³U/K` (Brinkman 1947, *Appl. Sci. Res.* A1,
//! 27, as the α → ∞ limit of his law [found: paper; equation number from memory]), 3/2 × (μU/K) × sphere volume.

use super::axisymmetric::velocity_along_x;
use super::{require_non_negative, require_positive, ReferenceError};
use std::f64::consts::PI;

/// An impermeable sphere held in a uniform Darcy stream.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DarcySphere {
    /// Radius a (m).
    pub radius: f64,
    /// Far-field superficial speed U (m/s).
    pub speed: f64,
    /// Fluid viscosity μ (Pa s).
    pub viscosity: f64,
    /// Permeability K (m²).
    pub permeability: f64,
}

impl DarcySphere {
    /// Validates and builds: a, μ, K > 0, U ≥ 0.
    pub fn new(radius: f64, speed: f64, viscosity: f64, permeability: f64) -> Result<Self, ReferenceError> {
        Ok(Self {
            radius: require_positive("radius", radius)?,
            speed: require_non_negative("speed", speed)?,
            viscosity: require_positive("viscosity", viscosity)?,
            permeability: require_positive("permeability", permeability)?,
        })
    }

    /// Radial profiles `(g, k)` with `u_r = U g cosθ`, `u_θ = −U k sinθ` at distance `r` (m, ≥ a).
    pub fn radial_profiles(&self, r: f64) -> (f64, f64) {
        let q = (self.radius / r).powi(3);
        (1.0 - q, 1.0 + 0.5 * q)
    }

    /// Velocity in polar form `(u_r, u_θ)` (m/s) at distance `r` (m, ≥ a) and polar angle `theta` (rad) from the
    /// downstream direction.
    pub fn velocity_polar(&self, r: f64, theta: f64) -> (f64, f64) {
        let (g, k) = self.radial_profiles(r);
        (self.speed * g * theta.cos(), -self.speed * k * theta.sin())
    }

    /// Velocity (m/s) at `point` (m) for a sphere centred at `centre` (m) in a stream along +x; zero inside.
    pub fn velocity(&self, point: [f64; 3], centre: [f64; 3]) -> [f64; 3] {
        velocity_along_x(point, centre, self.speed, |r| {
            if r < self.radius {
                (0.0, 0.0)
            } else {
                self.radial_profiles(r)
            }
        })
    }

    /// Pressure disturbance `p − p∞` (Pa) at `r` (m), `theta` (rad): `−(μ/K) U cosθ (r + a³/(2r²))`, where
    /// p∞ is the undisturbed pressure in the plane through the centre normal to the stream (the undisturbed
    /// field is `p∞ − (μ/K) U x`).
    pub fn pressure(&self, r: f64, theta: f64) -> f64 {
        let a3 = self.radius.powi(3);
        -self.viscosity / self.permeability * self.speed * theta.cos() * (r + a3 / (2.0 * r * r))
    }

    /// Drag on the sphere along the stream (N): `2πμa³U/K`.
    pub fn drag(&self) -> f64 {
        2.0 * PI * self.viscosity * self.radius.powi(3) * self.speed / self.permeability
    }
}

/// Drag (N) `2πμa³U/K` for `viscosity` μ (Pa s), `radius` a (m), `speed` U (m/s), `permeability` K (m²).
/// Unchecked convenience for trusted inputs (verification constants); use [`DarcySphere::new`] for input
/// that needs validation.
pub fn drag(viscosity: f64, radius: f64, speed: f64, permeability: f64) -> f64 {
    DarcySphere { radius, speed, viscosity, permeability }.drag()
}

/// Velocity `(u_r, u_θ)` (m/s) at distance `r` (m, ≥ a) and angle `theta` (rad, from downstream) about a sphere
/// of `radius` a (m) in a stream of `speed` U (m/s). Unchecked convenience, as [`drag`].
pub fn velocity_polar(speed: f64, radius: f64, r: f64, theta: f64) -> (f64, f64) {
    DarcySphere { radius, speed, viscosity: 1.0, permeability: 1.0 }.velocity_polar(r, theta)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// REFERENCES.md item B, check-value table, row "Darcy" (ρ = r/a).
    #[test]
    fn darcy_row_of_item_b_table() {
        let s = DarcySphere::new(1.0, 1.0, 1.0, 1.0).unwrap();
        assert!((s.velocity_polar(1.5, 0.0).0 - 0.703_703_704).abs() < 5e-10);
        assert!((s.velocity_polar(1.5, PI / 2.0).1 + 1.148_148_148).abs() < 5e-10);
        assert!((s.velocity_polar(1.0, PI / 2.0).1 + 1.5).abs() < 1e-15);
        assert_eq!(velocity_polar(1.0, 1.0, 1.5, 0.3), s.velocity_polar(1.5, 0.3));
        assert!(rel_diff(drag(2.0, 3.0, 5.0, 7.0), 2.0 * PI * 2.0 * 27.0 * 5.0 / 7.0) < 1e-15);
    }

    /// Cartesian form agrees with the polar one, the surface is impermeable, and the drag equals the
    /// surface integral of the pressure (no viscous traction in Darcy flow), by a midpoint rule in θ.
    #[test]
    fn cartesian_form_no_flux_and_pressure_drag() {
        let s = DarcySphere::new(5e-6, 2e-6, 1e-3, 1e-13).unwrap();
        let centre = [1e-5, -2e-5, 3e-5];
        let (r, theta, phi) = (7e-6, 0.7_f64, 1.1_f64);
        let dir = [theta.cos(), theta.sin() * phi.cos(), theta.sin() * phi.sin()];
        let point = [centre[0] + r * dir[0], centre[1] + r * dir[1], centre[2] + r * dir[2]];
        let u = s.velocity(point, centre);
        let (ur, ut) = s.velocity_polar(r, theta);
        let radial: f64 = (0..3).map(|i| u[i] * dir[i]).sum();
        assert!(rel_diff(radial, ur) < 1e-13);
        let speed2: f64 = u.iter().map(|v| v * v).sum();
        assert!(rel_diff(speed2, ur * ur + ut * ut) < 1e-13);
        assert!(s.velocity_polar(s.radius, 0.3).0.abs() < 1e-20);
        // F = −∮ p n·ê dS = −2πa² ∫₀^π p(a,θ) cosθ sinθ dθ.
        let n = 2000;
        let dt = PI / n as f64;
        let force: f64 = (0..n)
            .map(|i| {
                let t = (i as f64 + 0.5) * dt;
                -2.0 * PI * s.radius * s.radius * s.pressure(s.radius, t) * t.cos() * t.sin() * dt
            })
            .sum();
        assert!(rel_diff(force, s.drag()) < 1e-6, "{force} vs {}", s.drag());
    }
}
