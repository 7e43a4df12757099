//! Stokes flow through a periodic simple-cubic array of spheres: drag per sphere against volume fraction
//! (shared/REFERENCES.md item I).
//!
//! Sources: H. Hasimoto (1959), *J. Fluid Mech.* 5, 317–328 (leading term 1.7601 χ); A. S. Sangani &
//! A. Acrivos (1982), *Int. J. Multiphase Flow* 8, 343–360 (higher terms) [memory for both: bibliographic
//! details and coefficients]. With φ the solid volume fraction, χ = φ^{1/3}, U the superficial velocity and
//! F the drag per sphere, `K = F/(6πμaU)` satisfies
//!
//! `1/K = 1 − 1.7601 χ + χ³ − 1.5593 χ⁶ + 3.9799 χ⁸ − 3.0734 χ¹⁰ + O(χ¹¹)`.
//!
//! The mean pressure gradient is `G = nF` (force balance on a unit cell, n spheres per volume), so the array
//! has Darcy permeability `μU/G = 2a²/(9φK)`. REFERENCES.md: accurate to well under 1% for φ ≲ 0.1.

use super::{require_positive, ReferenceError};
use std::f64::consts::PI;

/// Densest volume fraction of a simple-cubic array (touching spheres), π/6.
pub const SIMPLE_CUBIC_PACKING: f64 = PI / 6.0;

/// Dimensionless drag `K = F/(6πμaU)` of a sphere in a simple-cubic array at solid `volume_fraction` φ
/// (0 < φ ≤ π/6; the truncated series is accurate to < 1% only for φ ≲ 0.1).
pub fn drag_factor(volume_fraction: f64) -> Result<f64, ReferenceError> {
    let phi = require_positive("volume_fraction", volume_fraction)?;
    if phi > SIMPLE_CUBIC_PACKING {
        return Err(ReferenceError::InvalidParameter {
            name: "volume_fraction",
            value: phi,
            requirement: "at most π/6 (touching spheres in a simple-cubic array)",
        });
    }
    let chi = phi.cbrt();
    let chi2 = chi * chi;
    let chi3 = chi2 * chi;
    let chi6 = chi3 * chi3;
    let inverse =
        1.0 - 1.7601 * chi + chi3 - 1.5593 * chi6 + 3.9799 * chi6 * chi2 - 3.0734 * chi6 * chi2 * chi2;
    Ok(1.0 / inverse)
}

/// Drag per sphere (N) in a simple-cubic array: `6πμaU K(φ)` for `viscosity` μ (Pa s), `radius` a (m),
/// superficial `speed` U (m/s) and `volume_fraction` φ.
pub fn drag_per_sphere(
    viscosity: f64,
    radius: f64,
    speed: f64,
    volume_fraction: f64,
) -> Result<f64, ReferenceError> {
    Ok(6.0 * PI * viscosity * radius * speed * drag_factor(volume_fraction)?)
}

/// Darcy permeability of the array (m²), `μU/(nF) = 2a²/(9φK(φ))`, for sphere `radius` a (m).
pub fn array_permeability(radius: f64, volume_fraction: f64) -> Result<f64, ReferenceError> {
    let a = require_positive("radius", radius)?;
    Ok(2.0 * a * a / (9.0 * volume_fraction * drag_factor(volume_fraction)?))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// Independent values: Zick & Homsy (1982, *J. Fluid Mech.* 115, 13–26), simple-cubic array, K = 2.008
    /// (φ = 0.027), 2.810 (φ = 0.064), 4.292 (φ = 0.125) [memory: recalled table values, not re-checked].
    /// They agree with the series to 0.1%; the 0.5% tolerance is the accuracy REFERENCES.md claims.
    #[test]
    fn series_against_recalled_exact_values() {
        for (phi, k) in [(0.027, 2.008), (0.064, 2.810), (0.125, 4.292)] {
            let got = drag_factor(phi).unwrap();
            assert!(rel_diff(got, k) < 5e-3, "φ = {phi}: K = {got} vs {k}");
        }
    }

    /// Dilute limit K ≈ 1 + 1.7601 φ^{1/3} (Hasimoto 1959), and G = nF against the permeability form.
    #[test]
    fn dilute_limit_and_force_balance() {
        let phi: f64 = 1e-9;
        let chi = phi.cbrt();
        let k = drag_factor(phi).unwrap();
        assert!((k - (1.0 + 1.7601 * chi + 1.7601_f64.powi(2) * chi * chi)).abs() < 1e-8);
        let (mu, a, u, phi) = (1e-3, 5e-6_f64, 1e-6, 0.05);
        let n = phi / (4.0 / 3.0 * PI * a.powi(3));
        let gradient = n * drag_per_sphere(mu, a, u, phi).unwrap();
        assert!(rel_diff(mu * u / gradient, array_permeability(a, phi).unwrap()) < 1e-14);
        assert!(drag_factor(0.6).is_err() && drag_factor(0.0).is_err());
    }
}
