//! Point source in a uniform stream with bulk decay: steady, switched-on and instantaneous (puff) fields, and
//! the 1-D column of Ogata & Banks (shared/REFERENCES.md item C).
//!
//! Equation: `∂c/∂t + U ∂c/∂x = D∇²c − kc + q δ(x) H(t)`, stream along +x, source at the origin.
//! - Steady: Rosenthal (1946, *Trans. ASME* 68, 849–866) moving point source [memory]; Carslaw & Jaeger
//!   (1959, *Conduction of Heat in Solids*, 2nd ed., §10.7) [memory for the section]:
//!   `c = q/(4πDr) · exp(Ux/(2D) − γr)`, `γ = √(U²/(4D²) + k/D)`.
//! - Switched on at t = 0: Hunt (1978, *J. Hydraul. Div. ASCE* 104, 75–85) and Wexler (1992, USGS TWRI 3-B7)
//!   [memory]; with `v = 2Dγ = √(U² + 4kD)`:
//!   `c = q e^{Ux/(2D)}/(8πDr) [e^{−γr} erfc((r − vt)/(2√(Dt))) + e^{γr} erfc((r + vt)/(2√(Dt)))]`.
//! - Puff of amount M released at t = 0: Carslaw & Jaeger §10.2 [memory], Galilean-shifted:
//!   `c = M (4πDt)^{−3/2} exp(−[(x − Ut)² + y² + z²]/(4Dt) − kt)`.
//! - 1-D column with c(0,t) = c₀, c(x,0) = 0: Ogata & Banks (1961, USGS Prof. Paper 411-A) [found: cited in
//!   the literature]: `c/c₀ = ½[erfc((x − Ut)/(2√(Dt))) + e^{Ux/D} erfc((x + Ut)/(2√(Dt)))]`.
//!
//! Products of a large exponential and a small erfc are formed as `e^{a − z²} erfcx(z)` (no overflow).

use super::special::exp_times_erfc;
use super::{require_non_negative, require_positive, ReferenceError};
use std::f64::consts::PI;

/// A point source of constant strength in a uniform stream along +x, in an unbounded medium with bulk decay.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PointSourceInStream {
    /// Source strength q (molecules/s).
    pub strength: f64,
    /// Stream speed U along +x (m/s).
    pub speed: f64,
    /// Diffusivity D (m²/s).
    pub diffusivity: f64,
    /// Bulk decay rate k (1/s).
    pub decay_rate: f64,
}

impl PointSourceInStream {
    /// Validates and builds: q, U, k ≥ 0; D > 0 (molecules/s, m/s, 1/s, m²/s).
    pub fn new(strength: f64, speed: f64, diffusivity: f64, decay_rate: f64) -> Result<Self, ReferenceError> {
        Ok(Self {
            strength: require_non_negative("strength", strength)?,
            speed: require_non_negative("speed", speed)?,
            diffusivity: require_positive("diffusivity", diffusivity)?,
            decay_rate: require_non_negative("decay_rate", decay_rate)?,
        })
    }

    /// Far-field decay constant γ = √(U²/(4D²) + k/D) (1/m).
    pub fn gamma(&self) -> f64 {
        let half = self.speed / (2.0 * self.diffusivity);
        (half * half + self.decay_rate / self.diffusivity).sqrt()
    }

    /// Steady concentration (molecules/m³) at `point` (m) relative to the source: `q/(4πDr) e^{Ux/(2D) − γr}`.
    pub fn steady_concentration(&self, point: [f64; 3]) -> f64 {
        let r = norm(point);
        let exponent = self.speed * point[0] / (2.0 * self.diffusivity) - self.gamma() * r;
        self.strength / (4.0 * PI * self.diffusivity * r) * exponent.exp()
    }

    /// Gradient of ln c of the steady field (1/m): `(U/2D) ê_x − (1/r + γ) r̂`. This is the strength-free
    /// far-field condition `∂c/∂n = c ∇ln c · n` of DESIGN.md §4.
    pub fn steady_log_gradient(&self, point: [f64; 3]) -> [f64; 3] {
        let r = norm(point);
        let radial = -(1.0 / r + self.gamma()) / r;
        let along = self.speed / (2.0 * self.diffusivity);
        [along + radial * point[0], radial * point[1], radial * point[2]]
    }

    /// Concentration (molecules/m³) at `point` (m) and time `t` (s) after the source switches on in clean
    /// medium (Hunt 1978 / Wexler 1992 form); zero for t ≤ 0.
    pub fn switched_on_concentration(&self, point: [f64; 3], t: f64) -> f64 {
        if t <= 0.0 {
            return 0.0;
        }
        let d = self.diffusivity;
        let r = norm(point);
        let gamma = self.gamma();
        let v = 2.0 * d * gamma;
        let spread = 2.0 * (d * t).sqrt();
        let drift = self.speed * point[0] / (2.0 * d);
        let ahead = exp_times_erfc(drift - gamma * r, (r - v * t) / spread);
        let behind = exp_times_erfc(drift + gamma * r, (r + v * t) / spread);
        self.strength / (8.0 * PI * d * r) * (ahead + behind)
    }

    /// Concentration (molecules/m³) at `point` (m), time `t` (s > 0) after an instantaneous release of
    /// `amount` M (molecules) at the origin: `M (4πDt)^{−3/2} exp(−|x − Ut ê_x|²/(4Dt) − kt)`.
    pub fn puff_concentration(&self, amount: f64, point: [f64; 3], t: f64) -> f64 {
        if t <= 0.0 {
            return 0.0;
        }
        let d = self.diffusivity;
        let dx = point[0] - self.speed * t;
        let r2 = dx * dx + point[1] * point[1] + point[2] * point[2];
        amount * (4.0 * PI * d * t).powf(-1.5) * (-r2 / (4.0 * d * t) - self.decay_rate * t).exp()
    }
}

fn norm(p: [f64; 3]) -> f64 {
    (p[0] * p[0] + p[1] * p[1] + p[2] * p[2]).sqrt()
}

/// Ogata & Banks (1961) 1-D column: c(x,t)/c₀ (dimensionless) at depth `x` (m, ≥ 0) and time `t` (s) for a
/// column of clean medium whose inlet is held at c₀ from t = 0, pore speed `speed` U (m/s), dispersion
/// `dispersion` D (m²/s).
pub fn ogata_banks(x: f64, t: f64, speed: f64, dispersion: f64) -> f64 {
    if t <= 0.0 {
        return if x <= 0.0 { 1.0 } else { 0.0 };
    }
    let spread = 2.0 * (dispersion * t).sqrt();
    0.5 * (exp_times_erfc(0.0, (x - speed * t) / spread)
        + exp_times_erfc(speed * x / dispersion, (x + speed * t) / spread))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::quadrature::integrate;
    use crate::reference::rel_diff;

    const POINTS: [[f64; 3]; 6] = [
        [1.0, 0.0, 0.0],
        [-1.0, 0.0, 0.0],
        [0.0, 1.0, 0.0],
        [3.0, 1.0, 0.0],
        [5.0, 0.0, 0.0],
        [-5.0, 0.0, 0.0],
    ];

    /// REFERENCES.md item C, check-value table (q = D = U = 1; 11 significant digits).
    #[test]
    fn values_of_item_c_table() {
        let steady0 = [
            7.957_747_154_6e-2,
            2.927_491_576_2e-2,
            4.826_617_631_5e-2,
            2.320_341_939_3e-2,
            1.591_549_430_9e-2,
            1.072_377_571_2e-4,
        ];
        let steady_half = [
            5.518_579_748_4e-2,
            2.030_172_033_9e-2,
            3.347_187_815_5e-2,
            7.292_348_866_2e-3,
            2.552_736_958_6e-3,
            1.720_020_632_9e-5,
        ];
        // (t = 0.5, t = 2, t = 10 with k = 0; t = 2 with k = 0.5) for the first four points.
        let transient = [
            [3.900_396_980_1e-2, 6.947_616_692_9e-2, 7.932_401_289_2e-2, 5.316_689_879_6e-2],
            [1.434_875_861_4e-2, 2.555_885_346_5e-2, 2.918_167_353_4e-2, 1.955_900_901_8e-2],
            [2.365_710_353_5e-2, 4.213_942_536_2e-2, 4.811_244_587_1e-2, 3.224_735_420_2e-2],
            [1.585_612_566_6e-4, 9.209_292_601_6e-3, 2.262_882_328_0e-2, 4.887_961_952_0e-3],
        ];
        let no_decay = PointSourceInStream::new(1.0, 1.0, 1.0, 0.0).unwrap();
        let decay = PointSourceInStream::new(1.0, 1.0, 1.0, 0.5).unwrap();
        for (i, p) in POINTS.iter().enumerate() {
            assert!(rel_diff(no_decay.steady_concentration(*p), steady0[i]) < 1e-10, "steady k=0 at {p:?}");
            assert!(
                rel_diff(decay.steady_concentration(*p), steady_half[i]) < 1e-10,
                "steady k=0.5 at {p:?}"
            );
        }
        for (i, row) in transient.iter().enumerate() {
            let p = POINTS[i];
            for (t, want) in [(0.5, row[0]), (2.0, row[1]), (10.0, row[2])] {
                let got = no_decay.switched_on_concentration(p, t);
                assert!(rel_diff(got, want) < 1e-10, "k = 0, t = {t} at {p:?}: {got:e} vs {want:e}");
            }
            let got = decay.switched_on_concentration(p, 2.0);
            assert!(rel_diff(got, row[3]) < 1e-10, "k = 0.5, t = 2 at {p:?}: {got:e}");
        }
    }

    /// REFERENCES.md item C: puff (M = D = U = 1, k = 0, t = 1) and Ogata–Banks values (U = D = c₀ = 1).
    #[test]
    fn puff_and_column_values_of_item_c() {
        let s = PointSourceInStream::new(1.0, 1.0, 1.0, 0.0).unwrap();
        assert!(rel_diff(s.puff_concentration(1.0, [1.0, 0.0, 0.0], 1.0), 0.022_448_390) < 3e-8);
        assert!(rel_diff(s.puff_concentration(1.0, [0.0, 0.0, 0.0], 1.0), 0.017_482_824) < 3e-8);
        for (x, t, want) in [
            (0.5, 0.5, 0.761_578_291_9),
            (1.0, 1.0, 0.713_791_788_1),
            (2.0, 1.0, 0.364_975_548_2),
            (5.0, 4.0, 0.470_379_999_7),
        ] {
            assert!((ogata_banks(x, t, 1.0, 1.0) - want).abs() < 6e-11, "c({x}, {t})");
        }
    }

    /// The switched-on field is the time integral of the puff (independent check by quadrature) and tends
    /// to the steady field; the log-gradient matches a finite difference of the steady field.
    #[test]
    fn switched_on_is_integrated_puff_and_tends_to_steady() {
        let s = PointSourceInStream::new(2.0, 0.7, 1.3, 0.2).unwrap();
        let p = [0.8, -0.4, 0.3];
        let t = 3.0;
        let integrated =
            integrate(|tau| s.puff_concentration(s.strength, p, t - tau), 0.0, t, 1e-13).unwrap();
        assert!(rel_diff(s.switched_on_concentration(p, t), integrated) < 1e-11);
        assert!(rel_diff(s.switched_on_concentration(p, 400.0), s.steady_concentration(p)) < 1e-12);
        let grad = s.steady_log_gradient(p);
        for axis in 0..3 {
            let mut plus = p;
            let mut minus = p;
            plus[axis] += 1e-5;
            minus[axis] -= 1e-5;
            let fd = (s.steady_concentration(plus).ln() - s.steady_concentration(minus).ln()) / 2e-5;
            assert!((fd - grad[axis]).abs() < 1e-8, "axis {axis}: {fd} vs {}", grad[axis]);
        }
    }
}
