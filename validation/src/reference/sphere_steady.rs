//! Steady field of an isolated secreting sphere in a medium at rest, with first-order surface uptake (Robin
//! condition) and first-order bulk decay (shared/REFERENCES.md item D, steady part).
//!
//! Source: elementary [derived]; the Robin (partially absorbing) sphere is the setting of Collins & Kimball
//! (1949, *J. Colloid Sci.* 4, 425) [memory]. Problem: `D∇²c − k c = 0` for r > a, `−D ∂c/∂r = F − κ c` at
//! r = a with `F = ν/(4πa²)`, c → 0 at infinity. Solution
//!
//! `c(r) = ν e^{−(r−a)/ℓ} / (4π r [D(1 + a/ℓ) + κ a])`, `ℓ = √(D/k)`,
//!
//! i.e. in the units of item E (`C = c·4πDa/ν`, ρ = r/a): `C(ρ) = e^{−β(ρ−1)} / ((1 + β + Bi) ρ)` with
//! `Bi = κa/D` and `β = a/ℓ`.

use super::{require_non_negative, require_positive, ReferenceError};
use std::f64::consts::PI;

/// An isolated spherical cell secreting at a constant rate into an unbounded medium at rest.
///
/// Sign convention: `secretion_rate` ν > 0 leaves the cell; the uptake flux density `κ c(a)` enters it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SecretingSphere {
    /// Radius a (m).
    pub radius: f64,
    /// Secretion rate ν (molecules/s), spread uniformly over the surface.
    pub secretion_rate: f64,
    /// Diffusivity D (m²/s).
    pub diffusivity: f64,
    /// First-order surface uptake velocity κ (m/s); 0 for a reflecting surface.
    pub uptake_velocity: f64,
    /// First-order bulk decay rate k (1/s).
    pub decay_rate: f64,
}

impl SecretingSphere {
    /// Validates and builds the sphere: a, D > 0; ν, κ, k ≥ 0 (a zero ν gives the zero field).
    pub fn new(
        radius: f64,
        secretion_rate: f64,
        diffusivity: f64,
        uptake_velocity: f64,
        decay_rate: f64,
    ) -> Result<Self, ReferenceError> {
        Ok(Self {
            radius: require_positive("radius", radius)?,
            secretion_rate: require_non_negative("secretion_rate", secretion_rate)?,
            diffusivity: require_positive("diffusivity", diffusivity)?,
            uptake_velocity: require_non_negative("uptake_velocity", uptake_velocity)?,
            decay_rate: require_non_negative("decay_rate", decay_rate)?,
        })
    }

    /// Biot (surface Damköhler) number `Bi = κa/D` (dimensionless).
    pub fn biot(&self) -> f64 {
        self.uptake_velocity * self.radius / self.diffusivity
    }

    /// Decay (Thiele-type) number `β = a√(k/D)` (dimensionless).
    pub fn decay_number(&self) -> f64 {
        self.radius * (self.decay_rate / self.diffusivity).sqrt()
    }

    /// Concentration unit of item E, `ν/(4πDa)` (molecules/m³): the surface value of a reflecting sphere.
    pub fn concentration_scale(&self) -> f64 {
        self.secretion_rate / (4.0 * PI * self.diffusivity * self.radius)
    }

    /// Steady concentration (molecules/m³) at distance `r` (m, ≥ a) from the centre:
    /// `c(r) = ν e^{−(r−a)/ℓ} / (4π r [D(1 + a/ℓ) + κa])`.
    pub fn steady_concentration(&self, r: f64) -> f64 {
        let beta = self.decay_number();
        let rho = r / self.radius;
        self.concentration_scale() * (-beta * (rho - 1.0)).exp() / ((1.0 + beta + self.biot()) * rho)
    }

    /// Steady surface concentration c(a) (molecules/m³) = `ν/(4πDa) · 1/(1 + β + Bi)`.
    pub fn steady_surface_concentration(&self) -> f64 {
        self.concentration_scale() / (1.0 + self.decay_number() + self.biot())
    }

    /// Steady bound rate (molecules/s): `κ · 4πa² · c(a)`.
    pub fn steady_bound_rate(&self) -> f64 {
        self.uptake_velocity * 4.0 * PI * self.radius * self.radius * self.steady_surface_concentration()
    }

    /// Steady rate at which ligand decays in the medium (molecules/s), `k ∫_{r>a} c dV = ν (1 + β)/(1 + β + Bi)`:
    /// with k > 0 it is the part of the secretion not bound back (with k = 0 it is zero and the remainder
    /// `ν/(1 + Bi)` escapes to infinity).
    pub fn steady_decay_rate(&self) -> f64 {
        // k ∫_a^∞ 4π r² c(a) (a/r) e^{−(r−a)/ℓ} dr = 4π k a c(a) ℓ (a + ℓ) = 4π D a c(a) (1 + β), as k ℓ² = D.
        if self.decay_rate == 0.0 {
            return 0.0;
        }
        let beta = self.decay_number();
        self.secretion_rate * (1.0 + beta) / (1.0 + beta + self.biot())
    }
}

/// Steady surface concentration c(a) (molecules/m³) = `ν/(4πDa(1 + β + Bi))` for `secretion_rate` ν
/// (molecules/s), `radius` a (m), `diffusivity` D (m²/s), `uptake_velocity` κ (m/s) and `decay_rate` k (1/s).
/// Unchecked convenience for trusted inputs; use [`SecretingSphere::new`] for input that needs validation.
pub fn surface_concentration(
    secretion_rate: f64,
    radius: f64,
    diffusivity: f64,
    uptake_velocity: f64,
    decay_rate: f64,
) -> f64 {
    SecretingSphere { radius, secretion_rate, diffusivity, uptake_velocity, decay_rate }
        .steady_surface_concentration()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// REFERENCES.md item D, check-value table, columns "steady C(1)" and "steady C(2)" (ν = a = D = 1).
    ///
    /// Discrepancy found: for ka²/D = 1 the table prints C(2) = 0.09196956 (Bi = 0) and 0.06131312 (Bi = 1),
    /// while its own formula gives e^{−1}/4 = 0.0919698603 and e^{−1}/6 = 0.0613132402 (also evaluated
    /// independently in Python). The k = 0 rows match to all printed digits; the k = 1 rows are checked to
    /// the 3.1e-7 by which the printed values differ from the formula (reported to the lead).
    #[test]
    fn steady_values_of_item_d_table() {
        let table = [
            (0.0, 0.0, 1.0, 0.5, 5e-9),
            (0.0, 1.0, 0.5, 0.091_969_56, 3.1e-7),
            (1.0, 0.0, 0.5, 0.25, 5e-9),
            (1.0, 1.0, 0.333_333, 0.061_313_12, 1.3e-7),
        ];
        for (kappa, k, c1, c2, tol2) in table {
            let s = SecretingSphere::new(1.0, 1.0, 1.0, kappa, k).unwrap();
            let unit = s.concentration_scale();
            assert!((s.steady_concentration(1.0) / unit - c1).abs() < 5e-7, "C(1), κ = {kappa}, k = {k}");
            let got = s.steady_concentration(2.0) / unit;
            assert!((got - c2).abs() < tol2, "C(2), κ = {kappa}, k = {k}: {got:.10} vs {c2}");
            assert!(rel_diff(s.steady_surface_concentration(), s.steady_concentration(1.0)) < 1e-15);
            assert_eq!(surface_concentration(1.0, 1.0, 1.0, kappa, k), s.steady_surface_concentration());
        }
        let s = SecretingSphere::new(1.0, 1.0, 1.0, 1.0, 1.0).unwrap();
        assert!((s.steady_concentration(2.0) / s.concentration_scale() - 0.061_313_240_2).abs() < 1e-10);
    }

    /// The secretion splits into uptake and decay (global balance, REFERENCES.md item F with ∂/∂t = 0),
    /// and the Robin condition −D c'(a) = F − κ c(a) holds (checked by a centred difference).
    #[test]
    fn steady_balance_and_boundary_condition() {
        let s = SecretingSphere::new(8e-6, 0.55, 1e-10, 2e-6, 3e-4).unwrap();
        let total = s.steady_bound_rate() + s.steady_decay_rate();
        assert!(rel_diff(total, s.secretion_rate) < 1e-13, "{total} vs {}", s.secretion_rate);
        let a = s.radius;
        let dr = 1e-4 * a;
        let slope = (s.steady_concentration(a + dr) - s.steady_concentration(a - dr)) / (2.0 * dr);
        let flux_density = s.secretion_rate / (4.0 * PI * a * a);
        let residual =
            -s.diffusivity * slope - (flux_density - s.uptake_velocity * s.steady_concentration(a));
        assert!(residual.abs() < 1e-7 * flux_density, "Robin residual {residual}");
        assert!(SecretingSphere::new(-1.0, 1.0, 1.0, 0.0, 0.0).is_err());
    }
}
