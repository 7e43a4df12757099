//! Counting noise of concentration and direction sensing (shared/REFERENCES.md item H).
//!
//! Sources:
//! - Berg & Purcell (1977), "Physics of chemoreception", *Biophys. J.* 20, 193–219 [found]: the order of
//!   magnitude `(T c a D)^{−1/2}` of the least fractional error, and the capture probability `Ns/(Ns + πa)`
//!   of N receptors of binding radius s, equivalent to a Robin surface with `Bi = Ns/(πa)`.
//! - Perfect absorber `(δc/c)² = 1/(4πDacT)`: Endres & Wingreen (2009, *Phys. Rev. Lett.* 103, 158101)
//!   [found: paper; prefactor from memory, re-derived in REFERENCES.md].
//! - Perfect monitor `(δc/c)² = 3/(5πDacT)` [derived in REFERENCES.md], quoted as the Berg–Purcell limit by
//!   Endres & Wingreen 2009 and Mora & Wingreen (2010, *Phys. Rev. Lett.* 104, 248101) [found: papers;
//!   prefactor from memory].
//! - Front–back contrast from independent Poisson counts N₁, N₂: `Â = (N₁ − N₂)/(N₁ + N₂)`,
//!   `Var(Â) ≈ 4N₁N₂/(N₁ + N₂)³ = (1 − Â²)/(N₁ + N₂)` (delta method [derived], Monte Carlo-checked here);
//!   with `c(θ) = c̄(1 + 3A cosθ)`, `E[Â] = 3A/2` and SNR = 1 needs `N₁ + N₂ ≈ 4/(9A²)`.
//!
//! The Monte Carlo uses its own seeded generator: SplitMix64 (Steele, Lea & Flood 2014, OOPSLA [memory]) and
//! Poisson variates by chop-down inversion for means below 10 and by Hörmann's transformed rejection with
//! squeeze, PTRS (Hörmann 1993, *Insurance: Math. Econ.* 12, 39–45 [memory]), above. Both are exact samplers
//! (no normal approximation), valid here up to means of at least 1e6.

use super::{require_non_negative, require_positive, ReferenceError};
use std::f64::consts::PI;

/// Delta-method variance of the front–back contrast `Â = (N₁ − N₂)/(N₁ + N₂)` for independent Poisson
/// counts of expected values `front` N₁ and `back` N₂ (dimensionless): `4N₁N₂/(N₁ + N₂)³`.
pub fn contrast_variance(front: f64, back: f64) -> f64 {
    let total = front + back;
    4.0 * front * back / (total * total * total)
}

/// Relative direction error `√Var(Â)/|Â|` of the front–back contrast (dimensionless; ∞ when Â = 0), for
/// expected counts `front` N₁ and `back` N₂ over the integration time.
pub fn direction_error(front: f64, back: f64) -> f64 {
    let contrast = (front - back) / (front + back);
    if contrast == 0.0 {
        return f64::INFINITY;
    }
    contrast_variance(front, back).sqrt() / contrast.abs()
}

/// Total count N₁ + N₂ at which the expected contrast `3A/2` equals its standard error: `4/(9A²)`, for a
/// surface anisotropy `anisotropy` A = ⟨c cosθ⟩_S/⟨c⟩_S (dimensionless).
pub fn counts_for_unit_snr(anisotropy: f64) -> f64 {
    4.0 / (9.0 * anisotropy * anisotropy)
}

/// Fractional error δc/c of a perfect absorber (dimensionless): `(4πDacT)^{−1/2}` for `diffusivity` D (m²/s),
/// `radius` a (m), `concentration` c (molecules/m³) and `integration_time` T (s).
pub fn absorber_fractional_error(
    diffusivity: f64,
    radius: f64,
    concentration: f64,
    integration_time: f64,
) -> Result<f64, ReferenceError> {
    let dact = product(diffusivity, radius, concentration, integration_time)?;
    Ok((4.0 * PI * dact).powf(-0.5))
}

/// Fractional error δc/c of a perfect monitor (dimensionless): `(3/(5πDacT))^{1/2}`; arguments as for
/// [`absorber_fractional_error`].
pub fn monitor_fractional_error(
    diffusivity: f64,
    radius: f64,
    concentration: f64,
    integration_time: f64,
) -> Result<f64, ReferenceError> {
    let dact = product(diffusivity, radius, concentration, integration_time)?;
    Ok((3.0 / (5.0 * PI * dact)).sqrt())
}

/// Berg & Purcell's order-of-magnitude fractional error `(TcaD)^{−1/2}` (dimensionless).
pub fn berg_purcell_estimate(
    diffusivity: f64,
    radius: f64,
    concentration: f64,
    integration_time: f64,
) -> Result<f64, ReferenceError> {
    Ok(product(diffusivity, radius, concentration, integration_time)?.powf(-0.5))
}

fn product(d: f64, a: f64, c: f64, t: f64) -> Result<f64, ReferenceError> {
    Ok(require_positive("diffusivity", d)?
        * require_positive("radius", a)?
        * require_positive("concentration", c)?
        * require_positive("integration_time", t)?)
}

/// Probability that a molecule reaching the cell is captured, `Ns/(Ns + πa)` (dimensionless), for `receptors`
/// N of binding radius `binding_radius` s (m) on a cell of radius a (m).
pub fn receptor_capture_fraction(receptors: f64, binding_radius: f64, radius: f64) -> f64 {
    let ns = receptors * binding_radius;
    ns / (ns + PI * radius)
}

/// Biot number of the equivalent Robin surface, `Bi = Ns/(πa)` (dimensionless; κ = NsD/(πa²)).
pub fn receptor_biot(receptors: f64, binding_radius: f64, radius: f64) -> f64 {
    receptors * binding_radius / (PI * radius)
}

/// SplitMix64 pseudo-random generator: tiny, fast, and fully determined by its seed.
#[derive(Clone, Debug)]
pub struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    pub fn new(seed: u64) -> Self {
        Self { state: seed }
    }

    /// Next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform variate on [0, 1) with 53 random bits.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Poisson variate of mean `mean` (≥ 0): chop-down inversion below 10, PTRS (Hörmann 1993) above.
    pub fn poisson(&mut self, mean: f64) -> u64 {
        if mean <= 0.0 {
            0
        } else if mean < 10.0 {
            self.poisson_inversion(mean)
        } else {
            self.poisson_ptrs(mean)
        }
    }

    fn poisson_inversion(&mut self, mean: f64) -> u64 {
        let mut p = (-mean).exp();
        let mut u = self.uniform();
        let mut k = 0u64;
        while u > p && k < 1000 {
            u -= p;
            k += 1;
            p *= mean / k as f64;
        }
        k
    }

    fn poisson_ptrs(&mut self, mean: f64) -> u64 {
        let log_mean = mean.ln();
        let b = 0.931 + 2.53 * mean.sqrt();
        let a = -0.059 + 0.02483 * b;
        let inv_alpha = 1.1239 + 1.1328 / (b - 3.4);
        let v_r = 0.9277 - 3.6224 / (b - 2.0);
        loop {
            let u = self.uniform() - 0.5;
            let v = self.uniform();
            let us = 0.5 - u.abs();
            if us <= 0.0 {
                continue;
            }
            let k = ((2.0 * a / us + b) * u + mean + 0.43).floor();
            if us >= 0.07 && v <= v_r {
                return k as u64;
            }
            if k < 0.0 || (us < 0.013 && v > us) {
                continue;
            }
            if v.ln() + inv_alpha.ln() - (a / (us * us) + b).ln() <= -mean + k * log_mean - ln_factorial(k) {
                return k as u64;
            }
        }
    }
}

/// ln k! for integer-valued k ≥ 0: direct sum below 20, Stirling's series for ln Γ(k + 1) above
/// (truncation error below 1e-16 there).
fn ln_factorial(k: f64) -> f64 {
    if k < 20.0 {
        return (2..=k as u64).map(|i| (i as f64).ln()).sum();
    }
    let z = k + 1.0;
    let z2 = z * z;
    (z - 0.5) * z.ln() - z
        + 0.5 * (2.0 * PI).ln()
        + (1.0 / 12.0 - (1.0 / 360.0 - (1.0 / 1260.0 - 1.0 / (1680.0 * z2)) / z2) / z2) / z
}

/// Monte Carlo estimate of Var(Â) for independent Poisson counts of means `front` and `back`, over `trials`
/// draws from `seed`; returns `(variance, standard error of that estimate)` (both dimensionless). Trials
/// with no counts at all are skipped (Â undefined).
pub fn monte_carlo_contrast_variance(
    front: f64,
    back: f64,
    trials: usize,
    seed: u64,
) -> Result<(f64, f64), ReferenceError> {
    require_non_negative("front", front)?;
    require_non_negative("back", back)?;
    let mut rng = SplitMix64::new(seed);
    let samples: Vec<f64> = (0..trials)
        .filter_map(|_| {
            let n1 = rng.poisson(front) as f64;
            let n2 = rng.poisson(back) as f64;
            (n1 + n2 > 0.0).then(|| (n1 - n2) / (n1 + n2))
        })
        .collect();
    let n = samples.len() as f64;
    if n < 2.0 {
        return Err(ReferenceError::InvalidParameter {
            name: "trials",
            value: trials as f64,
            requirement: "large enough to give at least two non-empty trials",
        });
    }
    let mean = samples.iter().sum::<f64>() / n;
    let (m2, m4) = samples.iter().fold((0.0, 0.0), |(m2, m4), x| {
        let d2 = (x - mean) * (x - mean);
        (m2 + d2, m4 + d2 * d2)
    });
    let variance = m2 / (n - 1.0);
    let fourth = m4 / n;
    // Large-sample standard error of a sample variance: √((μ₄ − σ⁴)/n).
    let standard_error = ((fourth - variance * variance) / n).sqrt();
    Ok((variance, standard_error))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// REFERENCES.md item H, "Monte Carlo check of Var(Â) (4×10⁵ trials)": this crate's own Monte Carlo
    /// (2×10⁵ trials) must agree with the tabulated Monte Carlo within 4 combined standard errors plus the
    /// table's rounding; the delta-method formula column is reproduced to its three digits.
    #[test]
    fn monte_carlo_table_of_item_h() {
        let table = [
            (1000.0, 1000.0, 5.03e-4, 5.00e-4),
            (1100.0, 900.0, 4.97e-4, 4.95e-4),
            (60.0, 40.0, 9.74e-3, 9.60e-3),
        ];
        let trials = 200_000;
        for (i, (n1, n2, mc_table, formula)) in table.into_iter().enumerate() {
            assert!((contrast_variance(n1, n2) - formula).abs() < 0.005 * formula, "formula {n1}, {n2}");
            let (var, se) = monte_carlo_contrast_variance(n1, n2, trials, 0x5EED + i as u64).unwrap();
            let se_table = se * (trials as f64 / 4e5).sqrt();
            let rounding = 0.005 * mc_table;
            let allowed = 4.0 * (se * se + se_table * se_table).sqrt() + rounding;
            assert!(
                (var - mc_table).abs() < allowed,
                "N = ({n1}, {n2}): MC {var:.4e} ± {se:.1e} vs table {mc_table:e} (allowed {allowed:.1e})"
            );
        }
    }

    /// The samplers against exact Poisson moments and a point probability, at means on both sides of the
    /// method switch and up to 1e6 (4-sigma bounds, seeded).
    #[test]
    fn poisson_sampler_moments_and_probability() {
        let n = 100_000;
        for (mean, point) in [(0.3, 0u64), (3.7, 3), (10.0, 10), (50.0, 50), (1e6, 1_000_000)] {
            let mut rng = SplitMix64::new(42 + mean as u64);
            let draws: Vec<u64> = (0..n).map(|_| rng.poisson(mean)).collect();
            let m = draws.iter().map(|&k| k as f64).sum::<f64>() / n as f64;
            let v = draws.iter().map(|&k| (k as f64 - m).powi(2)).sum::<f64>() / (n as f64 - 1.0);
            assert!((m - mean).abs() < 4.0 * (mean / n as f64).sqrt(), "mean {mean}: sample mean {m}");
            let var_se = (mean * (2.0 * mean + 1.0) / n as f64).sqrt(); // √((μ₄ − σ⁴)/n) for Poisson
            assert!((v - mean).abs() < 4.0 * var_se, "mean {mean}: sample variance {v}");
            let p = (-mean + point as f64 * mean.ln() - ln_factorial(point as f64)).exp();
            let freq = draws.iter().filter(|&&k| k == point).count() as f64 / n as f64;
            assert!(
                (freq - p).abs() < 4.0 * (p * (1.0 - p) / n as f64).sqrt() + 1e-5,
                "P({point}) at {mean}"
            );
        }
        // Stirling branch of ln k! against the direct sum.
        let direct: f64 = (2..=40u64).map(|i| (i as f64).ln()).sum();
        assert!(rel_diff(ln_factorial(40.0), direct) < 1e-14);
    }

    /// REFERENCES.md item H worked example (a = 5 µm, D = 100 µm²/s, c = 1 nM = 0.6022 µm⁻³, T = 1 s) and the
    /// counts needed for SNR = 1 (Darcy/Stokes at Pe = 0.01, Brinkman α = 3 at Pe = 0.1).
    #[test]
    fn worked_examples_of_item_h() {
        let (d, a, c, t) = (100e-12, 5e-6, 1e-9 * 6.022_140_76e23 * 1e3, 1.0); // 1 nM in molecules/m³
        assert!((4.0 * PI * d * a * c * t - 3784.0).abs() < 1.0);
        assert!((absorber_fractional_error(d, a, c, t).unwrap() - 0.0163).abs() < 5e-5);
        assert!((monitor_fractional_error(d, a, c, t).unwrap() - 0.0252).abs() < 5e-5);
        assert!((berg_purcell_estimate(d, a, c, t).unwrap() - 0.0576).abs() < 5e-5);
        let ratio = (monitor_fractional_error(d, a, c, t).unwrap()
            / absorber_fractional_error(d, a, c, t).unwrap())
        .powi(2);
        assert!((ratio - 2.4).abs() < 1e-12, "monitor/absorber variance = 12/5");
        assert!((receptor_capture_fraction(1e4, 1e-9, a) - 0.389).abs() < 5e-4);
        assert!((receptor_biot(1e4, 1e-9, a) - 0.637).abs() < 5e-4);
        assert!((counts_for_unit_snr(1.25e-3) / 2.8e5 - 1.0).abs() < 0.02);
        assert!((counts_for_unit_snr(6.25e-4) / 1.1e6 - 1.0).abs() < 0.05);
        assert!((counts_for_unit_snr(0.1 * 0.102_577_896_1) / 4.2e3 - 1.0).abs() < 0.02);
        assert!(direction_error(10.0, 10.0).is_infinite());
        let (n1, n2) = (1100.0, 900.0);
        let a_hat: f64 = 0.1;
        assert!(rel_diff(contrast_variance(n1, n2), (1.0 - a_hat * a_hat) / (n1 + n2)) < 1e-14);
        assert!(absorber_fractional_error(d, a, -1.0, t).is_err());
    }
}
