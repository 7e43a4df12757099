//! The complementary error function and its scaled form `erfcx x = e^{x²} erfc x`, needed by the switched-on
//! far-field condition. (The validation crate keeps its own, independent version to check this one against.)
//!
//! Methods (common practice): for x < 2 the everywhere-positive Maclaurin series
//! `erf x = (2/√π) e^{−x²} Σ 2ⁿ x^{2n+1} / (1·3···(2n+1))` (Abramowitz & Stegun 1964, eq. 7.1.6 [memory]);
//! for x ≥ 2 the Laplace continued fraction `√π erfcx x = 1/(x + (1/2)/(x + 1/(x + (3/2)/(x + …))))`
//! evaluated backwards from a fixed depth. Accuracy ≈ 1e-13 relative (checked against the validation crate).

const FRAC_2_SQRT_PI: f64 = std::f64::consts::FRAC_2_SQRT_PI;
/// Below this argument the series is used; above it the continued fraction.
const SWITCH: f64 = 2.0;
/// Depth of the backward continued fraction (enough for 1e-15 at x = 2).
const DEPTH: usize = 160;

fn erf_series(x: f64) -> f64 {
    let x2 = x * x;
    let mut term = x;
    let mut sum = x;
    let mut n = 0.0;
    while term.abs() > 1e-17 * sum.abs() {
        n += 1.0;
        term *= 2.0 * x2 / (2.0 * n + 1.0);
        sum += term;
    }
    FRAC_2_SQRT_PI * (-x2).exp() * sum
}

fn erfcx_fraction(x: f64) -> f64 {
    let mut tail = x;
    for k in (1..=DEPTH).rev() {
        tail = x + 0.5 * k as f64 / tail;
    }
    0.5 * FRAC_2_SQRT_PI / tail
}

/// `erfc x` (dimensionless).
pub fn erfc(x: f64) -> f64 {
    if x < 0.0 {
        2.0 - erfc(-x)
    } else if x < SWITCH {
        1.0 - erf_series(x)
    } else if x > 27.3 {
        0.0
    } else {
        (-x * x).exp() * erfcx_fraction(x)
    }
}

/// `erfcx x = e^{x²} erfc x` (dimensionless) for x ≥ 0.
pub fn erfcx(x: f64) -> f64 {
    if x < SWITCH {
        (x * x).exp() * erfc(x)
    } else {
        erfcx_fraction(x)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Values of erfc and erfcx [memory: standard tables, 16 digits]; the validation crate checks more points.
    #[test]
    fn known_values() {
        for (x, want) in [
            (0.5, 0.479_500_122_186_953_5),
            (1.0, 0.157_299_207_050_285_1),
            (2.0, 0.004_677_734_981_047_266),
            (3.0, 2.209_049_699_858_544e-5),
        ] {
            let got = erfc(x);
            assert!(((got - want) / want).abs() < 1e-12, "erfc({x}) = {got:e}, want {want:e}");
        }
        assert!((erfc(-1.0) - (2.0 - 0.157_299_207_050_285_1)).abs() < 1e-14);
        // erfcx(10) ≈ 1/(√π·10)·(1 − 1/200 + 3/40000 − …)
        let asymptotic = 0.5 * FRAC_2_SQRT_PI / 10.0 * (1.0 - 0.005 + 7.5e-5 - 1.875e-6);
        assert!(((erfcx(10.0) - asymptotic) / asymptotic).abs() < 1e-7);
        // Continuity at the switch between series and continued fraction.
        let (below, above) = (erfcx(SWITCH * (1.0 - 1e-12)), erfcx(SWITCH));
        assert!(((below - above) / above).abs() < 1e-11, "{below} vs {above}");
    }
}
