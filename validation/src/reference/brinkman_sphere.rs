//! Brinkman (and Stokes) flow past a fixed impermeable no-slip sphere (shared/REFERENCES.md item B).
//!
//! Source: H. C. Brinkman (1947), "A calculation of the viscous force exerted by a flowing fluid on a dense
//! swarm of particles", *Appl. Sci. Res.* A1, 27–34 [found: title, journal, opening sections]; the drag law
//! `F = 6πμ_e aU (1 + α + α²/3)` is recalled from the paper [memory for the equation number] and was
//! re-derived in REFERENCES.md. Problem: `μ_e∇²u − (μ/K)u − ∇p = 0`, `∇·u = 0`, u = 0 at r = a, u → U ê.
//!
//! Stokes stream function `ψ = (U/2) sin²θ f(r)` with
//! `f = r² − A a³/r + B a³(1 + λr) e^{−λ(r−a)}/r`, `A = 1 + 3/α + 3/α²`, `B = 3/α²`, `α = λa`,
//! `λ = √(μ/(μ_e K))`; `u_r = U cosθ f/r²`, `u_θ = −U sinθ f'/(2r)`,
//! `p = p∞ − (μ/K) U cosθ (r + A a³/(2r²))`.
//! The Stokes limit (λ = 0) is `u_r = U cosθ (1 − 3a/2r + a³/2r³)`, `u_θ = −U sinθ (1 − 3a/4r − a³/4r³)`,
//! `p − p∞ = −3μaU cosθ/(2r²)`, `F = 6πμaU` (Stokes 1851 [memory for the year]).
//!
//! Round-off: for 0 < α ≪ 1 the A and B terms cancel; about `2 log₁₀(1/α)` digits are lost near the sphere.

use super::axisymmetric::velocity_along_x;
use super::{require_non_negative, require_positive, ReferenceError};
use std::f64::consts::PI;

/// An impermeable no-slip sphere in a uniform Brinkman (or, with zero screening, Stokes) stream.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BrinkmanSphere {
    /// Radius a (m).
    pub radius: f64,
    /// Far-field superficial speed U (m/s).
    pub speed: f64,
    /// Effective (Brinkman) viscosity μ_e (Pa s).
    pub effective_viscosity: f64,
    /// Inverse Brinkman screening length λ = √(μ/(μ_e K)) (1/m); 0 gives Stokes flow.
    pub screening: f64,
}

impl BrinkmanSphere {
    /// Brinkman medium of viscosity μ (Pa s), effective viscosity μ_e (Pa s) and permeability K (m²);
    /// a (m) > 0, U (m/s) ≥ 0.
    pub fn new(
        radius: f64,
        speed: f64,
        viscosity: f64,
        effective_viscosity: f64,
        permeability: f64,
    ) -> Result<Self, ReferenceError> {
        let viscosity = require_positive("viscosity", viscosity)?;
        let effective_viscosity = require_positive("effective_viscosity", effective_viscosity)?;
        let permeability = require_positive("permeability", permeability)?;
        Ok(Self {
            radius: require_positive("radius", radius)?,
            speed: require_non_negative("speed", speed)?,
            effective_viscosity,
            screening: (viscosity / (effective_viscosity * permeability)).sqrt(),
        })
    }

    /// Stokes flow (K → ∞) of viscosity μ (Pa s) past a sphere of radius a (m) at speed U (m/s).
    pub fn stokes(radius: f64, speed: f64, viscosity: f64) -> Result<Self, ReferenceError> {
        Ok(Self {
            radius: require_positive("radius", radius)?,
            speed: require_non_negative("speed", speed)?,
            effective_viscosity: require_positive("viscosity", viscosity)?,
            screening: 0.0,
        })
    }

    /// α = λa, the sphere radius in screening lengths (dimensionless; = a/√K when μ_e = μ).
    pub fn alpha(&self) -> f64 {
        self.screening * self.radius
    }

    /// Radial profiles `(g, k)` with `u_r = U g cosθ`, `u_θ = −U k sinθ` at distance `r` (m, ≥ a):
    /// `g = f/r²`, `k = f'/(2r)`.
    pub fn radial_profiles(&self, r: f64) -> (f64, f64) {
        let a = self.radius;
        let q = (a / r).powi(3);
        let alpha = self.alpha();
        if alpha == 0.0 {
            let s = a / r;
            return (1.0 - 1.5 * s + 0.5 * q, 1.0 - 0.75 * s - 0.25 * q);
        }
        let lr = self.screening * r;
        let big_a = 1.0 + 3.0 / alpha + 3.0 / (alpha * alpha);
        let big_b = 3.0 / (alpha * alpha);
        let decay = (-self.screening * (r - a)).exp();
        let g = 1.0 - big_a * q + big_b * q * (1.0 + lr) * decay;
        let k = 1.0 + 0.5 * big_a * q - 0.5 * big_b * q * decay * (lr * lr + lr + 1.0);
        (g, k)
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

    /// Pressure disturbance `p − p∞` (Pa) at `r` (m), `theta` (rad):
    /// `−μ_e U cosθ [λ² r + (λ²a³ + 3λa² + 3a)/(2r²)]` (= `−(μ/K) U cosθ (r + A a³/(2r²))`, valid also at λ = 0).
    /// p∞ is the undisturbed pressure in the plane through the centre normal to the stream.
    pub fn pressure(&self, r: f64, theta: f64) -> f64 {
        let (a, l) = (self.radius, self.screening);
        let bracket = l * l * r + (l * l * a.powi(3) + 3.0 * l * a * a + 3.0 * a) / (2.0 * r * r);
        -self.effective_viscosity * self.speed * theta.cos() * bracket
    }

    /// Drag on the sphere along the stream (N): `6πμ_e aU (1 + α + α²/3)`.
    pub fn drag(&self) -> f64 {
        let alpha = self.alpha();
        6.0 * PI * self.effective_viscosity * self.radius * self.speed * (1.0 + alpha + alpha * alpha / 3.0)
    }

    /// The two parts of the drag (N): `(pressure, viscous) = (2πμ_e aU (1 + α + α²), 4πμ_e aU (1 + α))`.
    pub fn drag_parts(&self) -> (f64, f64) {
        let alpha = self.alpha();
        let scale = PI * self.effective_viscosity * self.radius * self.speed;
        (2.0 * scale * (1.0 + alpha + alpha * alpha), 4.0 * scale * (1.0 + alpha))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// Largest |u_θ|/U on the equator and where (ρ), by a scan and golden-section refinement on 1 ≤ ρ ≤ 20.
    fn equatorial_peak(s: &BrinkmanSphere) -> (f64, f64) {
        let k = |rho: f64| s.radial_profiles(rho * s.radius).1;
        let (mut best, mut at) = (0.0, 1.0);
        for i in 0..=1900 {
            let rho = 1.0 + 0.01 * i as f64;
            if k(rho) > best {
                best = k(rho);
                at = rho;
            }
        }
        let (mut lo, mut hi) = (at - 0.01, at + 0.01);
        let phi = 0.5 * (5.0_f64.sqrt() - 1.0);
        for _ in 0..80 {
            let m1 = hi - phi * (hi - lo);
            let m2 = lo + phi * (hi - lo);
            if k(m1) > k(m2) {
                hi = m2;
            } else {
                lo = m1;
            }
        }
        let rho = 0.5 * (lo + hi);
        (k(rho), rho)
    }

    /// REFERENCES.md item B, check-value table (μ_e = μ, a = U = μ = 1, K = 1/α²; ρ = r/a).
    #[test]
    fn values_of_item_b_table() {
        // (α, F/(6πμaU), u_r ρ=1.5 θ=0, u_θ ρ=1.5 θ=90°, u_θ ρ=1.1 θ=90°, peak |u_θ| and ρ or none)
        type Row = (f64, f64, f64, f64, f64, Option<(f64, f64)>);
        let table: [Row; 5] = [
            (0.1, 1.103_333, 0.162_711_542, -0.467_414_805, -0.143_322_489, None),
            (1.0, 2.333_333, 0.273_771_836, -0.756_583_422, -0.254_306_701, Some((1.033_844, 3.337))),
            (3.0, 7.0, 0.429_848_482, -1.061_945_599, -0.467_439_422, Some((1.107_879, 1.810))),
            (10.0, 44.333_333, 0.606_884_212, -1.189_819_947, -0.948_219_771, Some((1.240_537, 1.295))),
            (30.0, 331.0, 0.673_086_434, -1.163_456_477, -1.344_464_215, Some((1.355_161, 1.124))),
        ];
        for (alpha, drag, ur15, ut15, ut11, peak) in table {
            let s = BrinkmanSphere::new(1.0, 1.0, 1.0, 1.0, 1.0 / (alpha * alpha)).unwrap();
            assert!(rel_diff(s.alpha(), alpha) < 1e-15);
            assert!((s.drag() / (6.0 * PI) - drag).abs() < 5e-7, "α = {alpha}: drag");
            assert!((s.velocity_polar(1.5, 0.0).0 - ur15).abs() < 5e-10, "α = {alpha}: u_r(1.5)");
            assert!((s.velocity_polar(1.5, PI / 2.0).1 - ut15).abs() < 5e-10, "α = {alpha}: u_θ(1.5)");
            assert!((s.velocity_polar(1.1, PI / 2.0).1 - ut11).abs() < 5e-10, "α = {alpha}: u_θ(1.1)");
            let (value, at) = equatorial_peak(&s);
            match peak {
                Some((v, rho)) => {
                    assert!((value - v).abs() < 5e-7, "α = {alpha}: peak {value} vs {v}");
                    assert!((at - rho).abs() < 5e-4, "α = {alpha}: peak at {at} vs {rho}");
                }
                // The table lists no peak for α = 0.1: the (small) overshoot lies far out, at ρ ≳ 1/α,
                // beyond the scan; the scan must then end at its upper edge.
                None => assert!(at > 19.9, "α = {alpha}: peak {value} at ρ = {at} inside the scan"),
            }
        }
        let stokes = BrinkmanSphere::stokes(1.0, 1.0, 1.0).unwrap();
        assert!((stokes.velocity_polar(1.5, 0.0).0 - 0.148_148_148).abs() < 5e-10);
        assert!((stokes.velocity_polar(1.5, PI / 2.0).1 + 0.425_925_926).abs() < 5e-10);
        assert!(rel_diff(stokes.drag(), 6.0 * PI) < 1e-15);
    }

    /// No slip at r = a; the far field tends to the Darcy potential flow as α grows (item B limits); the
    /// pressure part of the drag equals −∮ p n·ê dS (midpoint rule in θ).
    #[test]
    fn no_slip_limits_and_pressure_drag() {
        for alpha in [0.0, 0.5, 4.0, 50.0] {
            let s = if alpha == 0.0 {
                BrinkmanSphere::stokes(2.0, 3.0, 0.7).unwrap()
            } else {
                BrinkmanSphere::new(2.0, 3.0, 0.7, 0.7, 4.0 / (alpha * alpha)).unwrap()
            };
            let (g, k) = s.radial_profiles(s.radius);
            assert!(g.abs() < 1e-13 && k.abs() < 1e-13, "α = {alpha}: slip g = {g}, k = {k}");
            let n = 4000;
            let dt = PI / n as f64;
            let force: f64 = (0..n)
                .map(|i| {
                    let t = (i as f64 + 0.5) * dt;
                    -2.0 * PI * s.radius * s.radius * s.pressure(s.radius, t) * t.cos() * t.sin() * dt
                })
                .sum();
            assert!(rel_diff(force, s.drag_parts().0) < 1e-6, "α = {alpha}: {force} vs {:?}", s.drag_parts());
            let (p, v) = s.drag_parts();
            assert!(rel_diff(p + v, s.drag()) < 1e-14);
        }
        let far = BrinkmanSphere::new(1.0, 1.0, 1.0, 1.0, 1e-8).unwrap(); // α = 1e4
        let darcy = crate::reference::darcy_sphere::DarcySphere::new(1.0, 1.0, 1.0, 1e-8).unwrap();
        for rho in [1.2, 2.0, 5.0] {
            let (gb, kb) = far.radial_profiles(rho);
            let (gd, kd) = darcy.radial_profiles(rho);
            assert!((gb - gd).abs() < 1e-3 && (kb - kd).abs() < 1e-3, "ρ = {rho}");
        }
        assert!(rel_diff(far.drag(), darcy.drag()) < 3.1e-4); // ratio (1 + α + α²/3)·3/α² − 1 ≈ 3/α
    }
}
