//! Mean-field background concentration along the chamber: 1-D steady advection–dispersion with a uniform
//! source and a first-order sink (shared/REFERENCES.md item G).
//!
//! Source: [derived] in REFERENCES.md (checked there against solve_bvp); the inlet condition is Danckwerts
//! (1953, *Chem. Eng. Sci.* 2, 1–13) [memory], the setting that of Wehner & Wilhelm (1956) [memory].
//!
//! `D_L c'' − U c' − k_eff c + S = 0` on 0 < x < L, `U c(0) − D_L c'(0) = U c_in`, `c'(L) = 0`, with S the
//! secretion per unit total volume and U the superficial speed. Closed forms:
//! - `k_eff = 0`: `c = c_in + (S/U)[x + (D_L/U)(1 − e^{−U(L−x)/D_L})]`, `c(L) = c_in + SL/U` for any D_L.
//! - `k_eff > 0`: `c = S/k_eff + P e^{m₁(x−L)} + Q e^{m₂x}`, `m₁,₂ = (U ± √(U² + 4k_eff D_L))/(2D_L)`, with P, Q
//!   from the two boundary conditions (written with `e^{m₁(x−L)}` so that nothing overflows at large Pe_L).
//! - `D_L = 0` (plug flow): `c = c_in + Sx/U`, or `(S/k_eff)(1 − e^{−k_eff x/U}) + c_in e^{−k_eff x/U}`.
//!
//! Homogenised cells (item G): S = ρ_c ν/(1 + Bi), `k_eff = ρ_c k_on + φ_f k` with `k_on = 4πDa Bi/(1 + Bi)`;
//! a cell's own near field adds `c_self = ν/(4πDa(1 + Bi))` to the background at its surface.
//!
//! Round-off: for 0 < k_eff L/U ≪ 1 the k_eff > 0 form cancels, losing about `log₁₀(U/(k_eff L))` digits.

use super::{require_non_negative, require_positive, ReferenceError};
use std::f64::consts::PI;

/// A 1-D column with a uniform source, first-order sink, Danckwerts inlet and zero-gradient outlet.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MeanFieldColumn {
    /// Column length L (m).
    pub length: f64,
    /// Superficial speed U (m/s), > 0.
    pub speed: f64,
    /// Longitudinal dispersion D_L (m²/s), ≥ 0 (0: plug flow).
    pub dispersion: f64,
    /// Sink rate k_eff (1/s) per unit total volume, ≥ 0.
    pub sink_rate: f64,
    /// Source density S (molecules m⁻³ s⁻¹) per unit total volume.
    pub source_density: f64,
    /// Inlet concentration c_in (molecules/m³).
    pub inlet_concentration: f64,
}

/// Source and sink of dilute, homogenised Robin cells (REFERENCES.md item G).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct HomogenisedCells {
    /// S = ρ_c ν/(1 + Bi) (molecules m⁻³ s⁻¹).
    pub source_density: f64,
    /// k_eff = ρ_c 4πDa Bi/(1 + Bi) + φ_f k (1/s).
    pub sink_rate: f64,
    /// A cell's own surface excess c_self = ν/(4πDa(1 + Bi)) (molecules/m³).
    pub self_concentration: f64,
}

/// Homogenises `number_density` ρ_c (cells/m³) of cells of `radius` a (m) secreting `secretion_rate` ν
/// (molecules/s) with surface uptake velocity κ (m/s), in a medium of `diffusivity` D (m²/s), fluid volume
/// fraction φ_f and bulk decay rate k (1/s).
pub fn homogenised_cells(
    number_density: f64,
    secretion_rate: f64,
    radius: f64,
    diffusivity: f64,
    uptake_velocity: f64,
    fluid_fraction: f64,
    decay_rate: f64,
) -> Result<HomogenisedCells, ReferenceError> {
    let n = require_non_negative("number_density", number_density)?;
    let nu = require_non_negative("secretion_rate", secretion_rate)?;
    let a = require_positive("radius", radius)?;
    let d = require_positive("diffusivity", diffusivity)?;
    let kappa = require_non_negative("uptake_velocity", uptake_velocity)?;
    let phi = require_non_negative("fluid_fraction", fluid_fraction)?;
    let k = require_non_negative("decay_rate", decay_rate)?;
    let biot = kappa * a / d;
    let uptake_per_cell = 4.0 * PI * d * a * biot / (1.0 + biot);
    Ok(HomogenisedCells {
        source_density: n * nu / (1.0 + biot),
        sink_rate: n * uptake_per_cell + phi * k,
        self_concentration: nu / (4.0 * PI * d * a * (1.0 + biot)),
    })
}

impl MeanFieldColumn {
    /// Validates and builds (SI units as in the field docs): L, U > 0; D_L, k_eff ≥ 0; S, c_in finite.
    pub fn new(
        length: f64,
        speed: f64,
        dispersion: f64,
        sink_rate: f64,
        source_density: f64,
        inlet_concentration: f64,
    ) -> Result<Self, ReferenceError> {
        Ok(Self {
            length: require_positive("length", length)?,
            speed: require_positive("speed", speed)?,
            dispersion: require_non_negative("dispersion", dispersion)?,
            sink_rate: require_non_negative("sink_rate", sink_rate)?,
            source_density: super::require_finite("source_density", source_density)?,
            inlet_concentration: super::require_finite("inlet_concentration", inlet_concentration)?,
        })
    }

    /// Column Péclet number Pe_L = UL/D_L (dimensionless; ∞ for plug flow).
    pub fn peclet(&self) -> f64 {
        self.speed * self.length / self.dispersion
    }

    /// Exponents and coefficients `(m₁, m₂, P, Q)` of the k_eff > 0, D_L > 0 solution
    /// `c = S/k + P e^{m₁(x−L)} + Q e^{m₂x}`.
    fn dispersive_sink_terms(&self) -> (f64, f64, f64, f64) {
        let (u, d, k, l) = (self.speed, self.dispersion, self.sink_rate, self.length);
        let root = (u * u + 4.0 * k * d).sqrt();
        let m1 = (u + root) / (2.0 * d);
        let m2 = -2.0 * k / (u + root); // = (U − root)/(2D) without cancellation
                                        // c'(L) = 0:  P m₁ + Q m₂ e^{m₂L} = 0.
                                        // Inlet:      P e^{−m₁L}(U − D m₁) + Q (U − D m₂) = U (c_in − S/k).
        let ratio = -m2 * (m2 * l).exp() / m1; // P = ratio · Q
        let q = u * (self.inlet_concentration - self.source_density / k)
            / ((u - d * m2) + ratio * (-m1 * l).exp() * (u - d * m1));
        (m1, m2, ratio * q, q)
    }

    /// Background concentration c(x) (molecules/m³) at distance `x` (m) from the inlet, 0 ≤ x ≤ L.
    pub fn concentration(&self, x: f64) -> f64 {
        let (u, d, k, l, s, c_in) = self.parts();
        match (d > 0.0, k > 0.0) {
            (false, false) => c_in + s * x / u,
            (false, true) => {
                let e = (-k * x / u).exp();
                s / k * (1.0 - e) + c_in * e
            }
            (true, false) => c_in + s / u * (x - d / u * (-u * (l - x) / d).exp_m1()),
            (true, true) => {
                let (m1, m2, p, q) = self.dispersive_sink_terms();
                s / k + p * (m1 * (x - l)).exp() + q * (m2 * x).exp()
            }
        }
    }

    /// Outlet concentration c(L) (molecules/m³).
    pub fn outlet_concentration(&self) -> f64 {
        self.concentration(self.length)
    }

    /// Column-averaged concentration (1/L)∫₀ᴸ c dx (molecules/m³).
    pub fn mean_concentration(&self) -> f64 {
        let (u, d, k, l, s, c_in) = self.parts();
        match (d > 0.0, k > 0.0) {
            (false, false) => c_in + s * l / (2.0 * u),
            (false, true) => {
                let z = k * l / u;
                s / k + (c_in - s / k) * (-(-z).exp_m1()) / z
            }
            (true, false) => {
                let pe = u * l / d;
                c_in + s / u * (l / 2.0 + d / u * (1.0 + (-pe).exp_m1() / pe))
            }
            (true, true) => {
                let (m1, m2, p, q) = self.dispersive_sink_terms();
                s / k + (p * -(-m1 * l).exp_m1() / m1 + q * (m2 * l).exp_m1() / m2) / l
            }
        }
    }

    fn parts(&self) -> (f64, f64, f64, f64, f64, f64) {
        (
            self.speed,
            self.dispersion,
            self.sink_rate,
            self.length,
            self.source_density,
            self.inlet_concentration,
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// REFERENCES.md item G, check-value table (S = U = L = 1, c_in = 0, D_L = 1/Pe_L; 10 decimals).
    #[test]
    fn values_of_item_g_table() {
        let table = [
            (0.5, 0.0, 0.786_938_680_6, 0.942_398_433_9, 1.0, Some(0.926_122_638_9)),
            (1.0, 0.0, 0.632_120_558_8, 0.893_469_340_3, 1.0, Some(0.867_879_441_2)),
            (5.0, 0.0, 0.198_652_410_6, 0.683_583_000_3, 1.0, Some(0.660_269_517_9)),
            (50.0, 0.0, 0.02, 0.52, 1.0, Some(0.5196)),
            (5.0, 1.0, 0.145_723_700_4, 0.439_902_752_8, 0.583_384_703_7, None),
            (1.0, 2.0, 0.240_547_268_7, 0.329_326_086_2, 0.360_306_476_8, None),
        ];
        for (pe, k, c0, c_half, c1, mean) in table {
            let col = MeanFieldColumn::new(1.0, 1.0, 1.0 / pe, k, 1.0, 0.0).unwrap();
            for (x, want) in [(0.0, c0), (0.5, c_half), (1.0, c1)] {
                let got = col.concentration(x);
                assert!((got - want).abs() < 6e-11, "Pe_L = {pe}, k = {k}, x = {x}: {got:.11} vs {want}");
            }
            if let Some(m) = mean {
                assert!((col.mean_concentration() - m).abs() < 6e-11, "Pe_L = {pe}: mean");
            }
        }
    }

    /// Boundary conditions, the global balance U(c(L) − c_in) = SL − k_eff ∫c dx, the mean against Simpson's
    /// rule, the plug-flow limit D_L → 0, and no overflow at Pe_L = 1e4.
    #[test]
    fn balance_boundary_conditions_and_limits() {
        for (d, k) in [(0.3, 0.0), (0.3, 0.7), (1e-4, 2.0), (0.0, 0.0), (0.0, 1.5)] {
            let col = MeanFieldColumn::new(2.0, 0.5, d, k, 3.0, 0.4).unwrap();
            let (l, u) = (col.length, col.speed);
            let balance = u * (col.outlet_concentration() - col.inlet_concentration)
                - (col.source_density * l - k * col.mean_concentration() * l);
            assert!(balance.abs() < 1e-11, "D = {d}, k = {k}: balance {balance}");
            let n = 20_000;
            let dx = l / n as f64;
            let simpson: f64 = (0..=n)
                .map(|i| {
                    let w = if i == 0 || i == n {
                        1.0
                    } else if i % 2 == 1 {
                        4.0
                    } else {
                        2.0
                    };
                    w * col.concentration(i as f64 * dx)
                })
                .sum::<f64>()
                * dx
                / 3.0;
            assert!(rel_diff(simpson / l, col.mean_concentration()) < 1e-9, "D = {d}, k = {k}: mean");
            if d > 0.0 {
                // Second-order one-sided differences (the outlet layer is only D/U thick).
                let h = 1e-6;
                let c = |x: f64| col.concentration(x);
                let inlet_slope = (-3.0 * c(0.0) + 4.0 * c(h) - c(2.0 * h)) / (2.0 * h);
                let inlet = u * c(0.0) - d * inlet_slope - u * col.inlet_concentration;
                assert!(inlet.abs() < 1e-6, "D = {d}, k = {k}: Danckwerts residual {inlet}");
                let outlet_slope = (3.0 * c(l) - 4.0 * c(l - h) + c(l - 2.0 * h)) / (2.0 * h);
                assert!(outlet_slope.abs() < 1e-3, "D = {d}, k = {k}: c'(L) = {outlet_slope}");
            }
        }
        let nearly_plug = MeanFieldColumn::new(1.0, 1.0, 1e-4, 1.0, 1.0, 0.2).unwrap();
        let plug = MeanFieldColumn::new(1.0, 1.0, 0.0, 1.0, 1.0, 0.2).unwrap();
        assert!((nearly_plug.concentration(0.6) - plug.concentration(0.6)).abs() < 1e-3);
        let sharp = MeanFieldColumn::new(1.0, 1.0, 1e-4, 1.0, 1.0, 0.0).unwrap();
        assert!(sharp.concentration(0.3).is_finite() && sharp.mean_concentration().is_finite());
    }

    /// REFERENCES.md item G dimensional example: ρ_c = 1e5 cells/mL, ν = 10 /s, L = 1 cm, U = 1 µm/s,
    /// D = 100 µm²/s, a = 5 µm: c_bg(outlet) = 1.0e16 m⁻³ and ν/(4πDa) = 1.59e15 m⁻³; the Robin saturation
    /// value S/k_eff = ν/(4πa²κ).
    #[test]
    fn dimensional_example_and_homogenised_cells() {
        let cells = homogenised_cells(1e11, 10.0, 5e-6, 1e-10, 0.0, 1.0, 0.0).unwrap();
        let col =
            MeanFieldColumn::new(1e-2, 1e-6, 1e-10, cells.sink_rate, cells.source_density, 0.0).unwrap();
        assert!(rel_diff(col.outlet_concentration(), 1.0e16) < 1e-12);
        assert!((cells.self_concentration / 1.59e15 - 1.0).abs() < 2e-3);
        let robin = homogenised_cells(1e11, 10.0, 5e-6, 1e-10, 3e-6, 1.0, 0.0).unwrap();
        let saturation = 10.0 / (4.0 * PI * 25e-12 * 3e-6);
        assert!(rel_diff(robin.source_density / robin.sink_rate, saturation) < 1e-13);
    }
}
