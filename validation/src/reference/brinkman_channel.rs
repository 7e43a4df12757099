//! Pressure-driven Brinkman flow in a plane channel (shared/REFERENCES.md item A).
//!
//! Equation (Brinkman 1947, *Appl. Sci. Res.* A1, 27 [found]): `0 = G + μ_e u'' − (μ/K) u`, `u(±h) = 0`,
//! with G = −dp/dx > 0 and u the superficial velocity. Solution [derived; standard, e.g. Nield & Bejan,
//! *Convection in Porous Media* (Springer), chapter on forced convection with the Brinkman model [memory for
//! the chapter]]:
//!
//! `β = √(μ/(μ_e K))`, `u(y) = (GK/μ)[1 − cosh βy / cosh βh]`, `ū = (GK/μ)[1 − tanh βh/(βh)]`,
//! `τ_w = μ_e |u'(±h)| = G tanh(βh)/β`, and the force balance `2hG = 2τ_w + (μ/K)·2h·ū`.
//!
//! Both limits are kept to full precision: the profile is formed without cancellation for βh → 0 (plane
//! Poiseuille) and without overflow for βh → ∞ (Darcy plug flow).

use super::{require_positive, ReferenceError};

/// A plane channel of half-width h filled with a Brinkman medium, driven by a uniform pressure gradient.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BrinkmanChannel {
    /// Half-width h (m): walls at y = ±h.
    pub half_width: f64,
    /// Driving pressure gradient G = −dp/dx (Pa/m), > 0 for flow along +x.
    pub pressure_gradient: f64,
    /// Fluid viscosity μ (Pa s).
    pub viscosity: f64,
    /// Effective (Brinkman) viscosity μ_e (Pa s).
    pub effective_viscosity: f64,
    /// Permeability K (m²).
    pub permeability: f64,
}

/// Above this βh the profile is formed from exponentials (cosh would overflow near βh ≈ 710).
const WIDE_CHANNEL: f64 = 20.0;
/// Below this βh the mean uses the Taylor series of `1 − tanh x / x`.
const NARROW_CHANNEL: f64 = 0.05;

impl BrinkmanChannel {
    /// Validates and builds: h, μ, μ_e, K > 0 (m, Pa s, Pa s, m²); G (Pa/m) any finite value.
    pub fn new(
        half_width: f64,
        pressure_gradient: f64,
        viscosity: f64,
        effective_viscosity: f64,
        permeability: f64,
    ) -> Result<Self, ReferenceError> {
        Ok(Self {
            half_width: require_positive("half_width", half_width)?,
            pressure_gradient: super::require_finite("pressure_gradient", pressure_gradient)?,
            viscosity: require_positive("viscosity", viscosity)?,
            effective_viscosity: require_positive("effective_viscosity", effective_viscosity)?,
            permeability: require_positive("permeability", permeability)?,
        })
    }

    /// Inverse screening length β = √(μ/(μ_e K)) (1/m).
    pub fn screening(&self) -> f64 {
        (self.viscosity / (self.effective_viscosity * self.permeability)).sqrt()
    }

    /// Darcy (core) velocity GK/μ (m/s).
    pub fn darcy_velocity(&self) -> f64 {
        self.pressure_gradient * self.permeability / self.viscosity
    }

    /// Superficial velocity u(y) (m/s) at transverse position `y` (m, |y| ≤ h):
    /// `(GK/μ)[1 − cosh βy / cosh βh]`.
    pub fn velocity(&self, y: f64) -> f64 {
        let (b, h) = (self.screening(), self.half_width);
        let y = y.abs().min(h);
        let shape = if b * h < WIDE_CHANNEL {
            // cosh βh − cosh βy = 2 sinh(β(h+y)/2) sinh(β(h−y)/2): no cancellation as βh → 0.
            2.0 * (0.5 * b * (h + y)).sinh() * (0.5 * b * (h - y)).sinh() / (b * h).cosh()
        } else {
            1.0 - (b * (y - h)).exp() * (1.0 + (-2.0 * b * y).exp()) / (1.0 + (-2.0 * b * h).exp())
        };
        self.darcy_velocity() * shape
    }

    /// Mean superficial velocity ū (m/s) = `(GK/μ)[1 − tanh βh/(βh)]`.
    pub fn mean_velocity(&self) -> f64 {
        let x = self.screening() * self.half_width;
        let shape = if x < NARROW_CHANNEL {
            let x2 = x * x;
            // 1 − tanh x/x = x²/3 − 2x⁴/15 + 17x⁶/315 − 62x⁸/2835 + …
            x2 * (1.0 / 3.0 - x2 * (2.0 / 15.0 - x2 * (17.0 / 315.0 - x2 * 62.0 / 2835.0)))
        } else {
            1.0 - x.tanh() / x
        };
        self.darcy_velocity() * shape
    }

    /// Wall shear stress τ_w = μ_e |u'(±h)| = G tanh(βh)/β (Pa).
    pub fn wall_shear_stress(&self) -> f64 {
        let b = self.screening();
        self.pressure_gradient * (b * self.half_width).tanh() / b
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// REFERENCES.md item A, check-value table (G = μ = h = 1; columns Da = K/h², M = μ_e/μ, u(0), ū, ū/(GK/μ)).
    #[test]
    fn values_of_item_a_table() {
        let table = [
            (1e-4, 1.0, 1.000_000e-4, 9.900_000e-5, 0.990_000),
            (1e-3, 7.5, 9.999_807e-4, 9.133_975e-4, 0.913_397),
            (1e-2, 1.0, 9.999_092e-3, 9.000_000e-3, 0.900_000),
            (1e-2, 7.5, 9.481_297e-3, 7.265_074e-3, 0.726_507),
            (1e-1, 1.0, 9.154_930e-2, 6.849_034e-2, 0.684_903),
            (1.0, 1.0, 0.351_945_7, 0.238_405_8, 0.238_406),
            (1.0, 2.0, 0.206_721_8, 0.138_942_8, 0.138_943),
            (10.0, 1.0, 0.479_980_9, 0.320_518_7, 0.032_052),
        ];
        for (da, m, u0, mean, ratio) in table {
            let c = BrinkmanChannel::new(1.0, 1.0, 1.0, m, da).unwrap();
            assert!(rel_diff(c.velocity(0.0), u0) < 6e-7, "Da = {da}, M = {m}: u(0) = {:e}", c.velocity(0.0));
            assert!(
                rel_diff(c.mean_velocity(), mean) < 6e-7,
                "Da = {da}, M = {m}: ū = {:e}",
                c.mean_velocity()
            );
            assert!((c.mean_velocity() / c.darcy_velocity() - ratio).abs() < 5e-7, "Da = {da}, M = {m}");
        }
        // "Poiseuille check: K = 1e6, M = 1 gives ū = 0.3333332"; "Darcy check: K = 1e-8 gives 0.9999000".
        let poiseuille = BrinkmanChannel::new(1.0, 1.0, 1.0, 1.0, 1e6).unwrap();
        assert!((poiseuille.mean_velocity() - 0.333_333_2).abs() < 5e-8);
        let darcy = BrinkmanChannel::new(1.0, 1.0, 1.0, 1.0, 1e-8).unwrap();
        assert!((darcy.mean_velocity() / darcy.darcy_velocity() - 0.999_900_0).abs() < 5e-8);
    }

    /// Force balance 2hG = 2τ_w + (μ/K)·2h·ū (exact identity), no slip, and the mean as the profile's
    /// average (Simpson's rule), across the narrow, intermediate and wide branches.
    #[test]
    fn force_balance_no_slip_and_mean() {
        for (k, m) in [(1e6, 1.0), (0.3, 1.0), (1e-3, 7.5), (1e-5, 1.0)] {
            let c = BrinkmanChannel::new(2e-4, 5.0, 1e-3, m * 1e-3, k * 4e-8).unwrap();
            let h = c.half_width;
            let balance =
                2.0 * c.wall_shear_stress() + c.viscosity / c.permeability * 2.0 * h * c.mean_velocity();
            assert!(rel_diff(balance, 2.0 * h * c.pressure_gradient) < 1e-12, "K/h² = {k}");
            assert!(c.velocity(h).abs() < 1e-15 * c.darcy_velocity().max(c.mean_velocity()));
            let n = 20_000;
            let dy = 2.0 * h / n as f64;
            let simpson: f64 = (0..=n)
                .map(|i| {
                    let w = if i == 0 || i == n {
                        1.0
                    } else if i % 2 == 1 {
                        4.0
                    } else {
                        2.0
                    };
                    w * c.velocity(-h + i as f64 * dy)
                })
                .sum::<f64>()
                * dy
                / 3.0;
            assert!(rel_diff(simpson / (2.0 * h), c.mean_velocity()) < 1e-8, "K/h² = {k}");
        }
    }
}
