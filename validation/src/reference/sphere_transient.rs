//! Transient field of a secreting sphere switched on at t = 0 in a medium at rest, with Robin uptake and bulk
//! decay (shared/REFERENCES.md item D, transient part, and the amount-in-medium values of item F).
//!
//! Source: Carslaw & Jaeger (1959), *Conduction of Heat in Solids*, 2nd ed., §9.10, region bounded internally
//! by a sphere with constant flux and radiation conditions [memory for the section]; the formula below was
//! re-derived in REFERENCES.md by Laplace transform. With `h = 1/a + κ/D`, `x = r − a`, `X = x/(2√(Dt))`
//! and `F = ν/(4πa²)`, for k = 0 and c(r, 0) = 0:
//!
//! `c₀(r,t) = (F a/(D h r)) [erfc X − e^{−X²} erfcx(X + h√(Dt))]`  (overflow-safe form).
//!
//! Bulk decay k enters by Duhamel's principle (exact): `c_k(t) = e^{−kt} c₀(t) + k ∫₀ᵗ e^{−ks} c₀(s) ds`,
//! evaluated here by tanh–sinh quadrature. The same superposition holds for any linear functional of the
//! field, which gives the amount in the medium `M(t) = ∫ c dV` from its k = 0 form
//! `M₀(t) = ν t − κ 4πa² ∫₀ᵗ c₀(a,s) ds`, whose time integral is closed [derived here]:
//! `∫₀ᵗ c₀(a,s) ds = (F/(D h)) [t − (erfcx(Y) − 1 + 2Y/√π)/(h² D)]`, `Y = h√(Dt)`
//! (from `d/dy[erfcx y] = 2y erfcx y − 2/√π`).

use super::quadrature::integrate;
use super::special::{erfc, erfcx};
use super::sphere_steady::SecretingSphere;
use super::{require_non_negative, ReferenceError};
use std::f64::consts::PI;

/// Relative tolerance of the Duhamel quadratures.
const DUHAMEL_TOLERANCE: f64 = 1e-12;

/// `e^{−kt} f(t) + k ∫₀ᵗ e^{−ks} f(s) ds`: the response with bulk decay k (1/s) from the response f without it.
fn with_decay<F: Fn(f64) -> f64>(decay_rate: f64, t: f64, f: F) -> Result<f64, ReferenceError> {
    if decay_rate == 0.0 {
        return Ok(f(t));
    }
    let tail = integrate(|s| (-decay_rate * s).exp() * f(s), 0.0, t, DUHAMEL_TOLERANCE)?;
    Ok((-decay_rate * t).exp() * f(t) + decay_rate * tail)
}

impl SecretingSphere {
    /// `h = 1/a + κ/D` (1/m), the Robin coefficient of the transient solution.
    fn robin_coefficient(&self) -> f64 {
        1.0 / self.radius + self.uptake_velocity / self.diffusivity
    }

    /// Concentration without bulk decay, `c₀(r,t)` (molecules/m³); zero for t ≤ 0.
    fn concentration_without_decay(&self, r: f64, t: f64) -> f64 {
        if t <= 0.0 {
            return 0.0;
        }
        let d = self.diffusivity;
        let h = self.robin_coefficient();
        let flux_density = self.secretion_rate / (4.0 * PI * self.radius * self.radius);
        let spread = (d * t).sqrt();
        let x = (r - self.radius) / (2.0 * spread);
        flux_density * self.radius / (d * h * r) * (erfc(x) - (-x * x).exp() * erfcx(x + h * spread))
    }

    /// Amount in the medium without decay, `M₀(t) = ν t − κ 4πa² ∫₀ᵗ c₀(a,s) ds` (molecules).
    fn amount_without_decay(&self, t: f64) -> f64 {
        if t <= 0.0 {
            return 0.0;
        }
        let d = self.diffusivity;
        let h = self.robin_coefficient();
        let area = 4.0 * PI * self.radius * self.radius;
        let flux_density = self.secretion_rate / area;
        let y = h * (d * t).sqrt();
        let exposure = flux_density / (d * h) * (t - (erfcx(y) - 1.0 + 2.0 * y / PI.sqrt()) / (h * h * d));
        self.secretion_rate * t - self.uptake_velocity * area * exposure
    }

    /// Concentration (molecules/m³) at distance `r` (m, ≥ a) and time `t` (s) after secretion switches on in
    /// ligand-free medium: Carslaw & Jaeger's Robin sphere, with Duhamel's integral for the decay rate k.
    pub fn transient_concentration(&self, r: f64, t: f64) -> Result<f64, ReferenceError> {
        require_non_negative("time", t)?;
        with_decay(self.decay_rate, t, |s| self.concentration_without_decay(r, s))
    }

    /// Amount of ligand in the medium, `M(t) = ∫_{r>a} c dV` (molecules), at time `t` (s) after switch-on:
    /// secreted minus bound minus decayed (REFERENCES.md item F).
    pub fn transient_amount_in_medium(&self, t: f64) -> Result<f64, ReferenceError> {
        require_non_negative("time", t)?;
        with_decay(self.decay_rate, t, |s| self.amount_without_decay(s))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// REFERENCES.md item D, check-value table, transient columns (ν = a = D = 1; entries 4πDa·c/ν, 8 digits).
    #[test]
    fn transient_values_of_item_d_table() {
        // (κ, k, t=0.1 r=a, t=1 r=a, t=10 r=a, t=1 r=2a)
        let table = [
            (0.0, 0.0, 0.276_421_56, 0.572_416_42, 0.829_422_28, 0.114_524_57),
            (0.0, 1.0, 0.268_601_72, 0.471_604_94, 0.499_999_68, 0.070_122_80),
            (1.0, 0.0, 0.223_196_87, 0.372_302_16, 0.455_934_73, 0.078_830_99),
            (1.0, 1.0, 0.217_624_51, 0.323_129_86, 0.333_333_25, 0.049_514_98),
        ];
        for (kappa, k, c01, c1, c10, c1r2) in table {
            let s = SecretingSphere::new(1.0, 1.0, 1.0, kappa, k).unwrap();
            let unit = s.concentration_scale();
            for (r, t, want) in [(1.0, 0.1, c01), (1.0, 1.0, c1), (1.0, 10.0, c10), (2.0, 1.0, c1r2)] {
                let got = s.transient_concentration(r, t).unwrap() / unit;
                assert!(
                    (got - want).abs() < 6e-9,
                    "κ = {kappa}, k = {k}, r = {r}, t = {t}: {got:.10} vs {want}"
                );
            }
        }
    }

    /// Approach to the steady state of item D at long times (k > 0 makes it exponential).
    #[test]
    fn tends_to_the_steady_field() {
        let s = SecretingSphere::new(1.0, 1.0, 1.0, 0.5, 2.0).unwrap();
        for r in [1.0, 1.7, 3.0] {
            let late = s.transient_concentration(r, 40.0).unwrap();
            let steady = s.steady_concentration(r);
            assert!(((late - steady) / steady).abs() < 1e-12, "r = {r}: {late} vs {steady}");
        }
    }

    /// REFERENCES.md item F, transient check values of M(t) = ∫ c dV (ν = a = D = 1, 8 decimals).
    #[test]
    fn amount_in_medium_of_item_f_table() {
        let table = [
            (0.0, 0.0, 1.0, 5.0),
            (1.0, 0.0, 0.689_019_25, 3.021_184_87),
            (0.0, 1.0, 0.632_120_56, 0.993_262_05),
            (1.0, 1.0, 0.445_953_01, 0.662_914_26),
        ];
        for (kappa, k, m1, m5) in table {
            let s = SecretingSphere::new(1.0, 1.0, 1.0, kappa, k).unwrap();
            for (t, want) in [(1.0, m1), (5.0, m5)] {
                let got = s.transient_amount_in_medium(t).unwrap();
                assert!((got - want).abs() < 6e-9, "κ = {kappa}, k = {k}, t = {t}: {got:.10} vs {want}");
            }
        }
    }

    /// Independent check of M(t) without decay: the radial integral ∫_a^∞ 4πr² c₀(r,t) dr by quadrature.
    #[test]
    fn amount_matches_the_volume_integral_of_the_field() {
        let s = SecretingSphere::new(1.0, 1.0, 1.0, 1.0, 0.0).unwrap();
        let t = 2.0;
        let volume_integral = crate::reference::quadrature::integrate_to_infinity(
            |r| 4.0 * PI * r * r * s.concentration_without_decay(r, t),
            1.0,
            1e-12,
        )
        .unwrap();
        let closed = s.transient_amount_in_medium(t).unwrap();
        assert!(((volume_integral - closed) / closed).abs() < 1e-10, "{volume_integral} vs {closed}");
    }
}
