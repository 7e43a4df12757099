//! Special functions needed by the reference solutions: the complementary error function `erfc`, its scaled
//! form `erfcx(x) = e^{x²} erfc(x)`, and the generalised exponential integral `E_n(x) = ∫₁^∞ e^{−xt} t^{−n} dt`.
//!
//! Methods (common practice; written here rather than taken from a library):
//! - `erf` for |x| < 1/2 from the everywhere-positive Maclaurin series
//!   `erf x = (2/√π) e^{−x²} Σ_{n≥0} 2ⁿ x^{2n+1} / (1·3···(2n+1))` (Abramowitz & Stegun 1964, eq. 7.1.6
//!   [memory for the equation number]).
//! - `erfcx` for x ≥ 1/2 from a Chebyshev series of `√π x erfcx x` in `t = (x − 3)/(x + 3)`, the mapping of
//!   Schonfelder (1978, *Math. Comp.* 32, 1232) [memory]; the coefficients were computed for this crate
//!   with mpmath. (A Lentz-evaluated Laplace continued fraction was tried first: 2.5e-15 relative near x = 1.)
//!   `erfc = e^{−x²} erfcx` with x² split exactly into two doubles so that the exponential adds no error
//!   growing with x².
//! - `E_n` by the series (x ≤ 1) and the Legendre continued fraction (x > 1), the classic scheme of
//!   Press et al., *Numerical Recipes* (3rd ed. 2007, §6.3) [memory for the section].
//!
//! Measured accuracy against 30-digit mpmath values: erfc ≤ 4.3e-16 and erfcx ≤ 6.6e-16 relative at 500
//! random points on [−3, 27] ∪ [1e-8, 1]; E_n ≤ 4.5e-15 relative at 300 random (n ≤ 6, x ∈ [1e-3, 300]).
//! The unit tests below pin a subset of those values.

/// Euler–Mascheroni constant γ.
const EULER_GAMMA: f64 = 0.5772156649015329;
/// 1/√π.
const FRAC_1_SQRT_PI: f64 = 0.5641895835477563;
/// Below this |x| erf is summed as a series (erfc ≥ 0.48, so 1 − erf loses no digits), above it erfc
/// comes from the Chebyshev series of erfcx.
const SERIES_LIMIT: f64 = 0.5;
/// Machine-precision stop for the series and continued fractions.
const EPS: f64 = 1e-17;
/// Guard against a zero denominator in the modified Lentz algorithm.
const TINY: f64 = 1e-300;

/// erf x for |x| < [`SERIES_LIMIT`]: `(2/√π) e^{−x²} Σ (2x²)ⁿ x / (2n+1)!!`, all terms positive.
fn erf_series(x: f64) -> f64 {
    let two_x2 = 2.0 * x * x;
    let mut term = x;
    let mut sum = x;
    let mut n = 0.0;
    while term.abs() > EPS * sum.abs() {
        n += 1.0;
        term *= two_x2 / (2.0 * n + 1.0);
        sum += term;
    }
    2.0 * FRAC_1_SQRT_PI * (-x * x).exp() * sum
}

/// Chebyshev coefficients of `g(x) = √π x erfcx(x)` on x ∈ [1/2, ∞) in the variable
/// `s = 2(t − t₀)/(1 − t₀) − 1`, `t = (x − 3)/(x + 3)`, `t₀ = −5/7`. Computed for this crate with mpmath at
/// 40 digits from 80 Chebyshev nodes (coefficients below 1e-19 dropped).
const ERFCX_CHEBYSHEV: [f64; 26] = [
    0.8815854932824964,
    0.18976359434075632,
    -0.09898741646852227,
    0.035507654738248635,
    -0.009527490859526236,
    0.0018958777303162426,
    -0.0002526767492136698,
    1.278202142092124e-05,
    2.7712754634564293e-06,
    -6.033228086124825e-07,
    8.864233183981326e-10,
    1.4440140372440526e-08,
    -1.0266268547778732e-09,
    -3.3943162077967017e-10,
    4.3509125863699285e-11,
    9.119776398588744e-12,
    -1.5291450553085404e-12,
    -2.965656012151949e-13,
    5.09752540952109e-14,
    1.1482548358058365e-14,
    -1.5914409091404514e-15,
    -4.965916658589795e-16,
    4.0958144782518726e-17,
    2.2351142581738694e-17,
    -3.565244918472177e-19,
    -9.828808076613499e-19,
];

/// erfcx x = e^{x²} erfc x for x ≥ [`SERIES_LIMIT`] from the Chebyshev series of `√π x erfcx x` (Clenshaw).
fn erfcx_chebyshev(x: f64) -> f64 {
    const T0: f64 = -5.0 / 7.0;
    let t = (x - 3.0) / (x + 3.0);
    let s = 2.0 * (t - T0) / (1.0 - T0) - 1.0;
    let (mut b1, mut b2) = (0.0, 0.0);
    for &c in ERFCX_CHEBYSHEV.iter().skip(1).rev() {
        let b0 = 2.0 * s * b1 - b2 + c;
        b2 = b1;
        b1 = b0;
    }
    let g = s * b1 - b2 + ERFCX_CHEBYSHEV[0];
    FRAC_1_SQRT_PI * g / x
}

/// e^{−x²} without the rounding error of forming x² (relative error of a plain `(-x*x).exp()` grows as x²·ε).
fn exp_minus_square(x: f64) -> f64 {
    let hi = x * x;
    let lo = x.mul_add(x, -hi);
    (-hi).exp() * (-lo).exp()
}

/// Complementary error function `erfc x = (2/√π) ∫ₓ^∞ e^{−t²} dt` (dimensionless), ≈1e-15 relative.
pub fn erfc(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    if x.abs() < SERIES_LIMIT {
        1.0 - erf_series(x)
    } else if x > 0.0 {
        if x > 27.3 {
            return 0.0; // below the smallest subnormal
        }
        exp_minus_square(x) * erfcx_chebyshev(x)
    } else {
        2.0 - erfc(-x)
    }
}

/// Error function `erf x = 1 − erfc x` (dimensionless).
pub fn erf(x: f64) -> f64 {
    if x.abs() < SERIES_LIMIT {
        erf_series(x)
    } else {
        x.signum() * (1.0 - erfc(x.abs()))
    }
}

/// Scaled complementary error function `erfcx x = e^{x²} erfc x` (dimensionless), finite for all x ≥ −26;
/// it lets products such as `e^{a} erfc(z)` be formed as `e^{a − z²} erfcx(z)` without overflow.
pub fn erfcx(x: f64) -> f64 {
    if x.is_nan() {
        return f64::NAN;
    }
    if x >= SERIES_LIMIT {
        if x > 1e8 {
            return FRAC_1_SQRT_PI / x; // first term of the asymptotic series, exact to rounding here
        }
        erfcx_chebyshev(x)
    } else {
        (x * x).exp() * erfc(x)
    }
}

/// `e^{a} erfc(z)` evaluated without overflow or underflow in the intermediate factors (dimensionless).
pub fn exp_times_erfc(a: f64, z: f64) -> f64 {
    if z > 0.0 {
        (a - z * z).exp() * erfcx(z)
    } else {
        a.exp() * erfc(z)
    }
}

/// Sum of the `E_n` series for 0 < x ≤ 1 (Numerical Recipes' `expint`, series branch).
fn expint_series(n: u32, x: f64) -> f64 {
    let nm1 = n as i64 - 1;
    let mut sum = if nm1 != 0 { 1.0 / nm1 as f64 } else { -x.ln() - EULER_GAMMA };
    let mut fact = 1.0;
    for i in 1..1000_i64 {
        fact *= -x / i as f64;
        let delta = if i != nm1 {
            -fact / (i - nm1) as f64
        } else {
            let psi = -EULER_GAMMA + (1..=nm1).map(|ii| 1.0 / ii as f64).sum::<f64>();
            fact * (-x.ln() + psi)
        };
        sum += delta;
        if delta.abs() < sum.abs() * EPS {
            break;
        }
    }
    sum
}

/// `e^{x} E_n(x)` for x > 1 by the Legendre continued fraction (modified Lentz), no exponential needed.
fn scaled_expint_continued_fraction(n: u32, x: f64) -> f64 {
    let nm1 = n as f64 - 1.0;
    let mut b = x + n as f64;
    let mut c = 1.0 / TINY;
    let mut d = 1.0 / b;
    let mut h = d;
    for i in 1..10_000 {
        let i = i as f64;
        let an = -i * (nm1 + i);
        b += 2.0;
        d = 1.0 / (an * d + b);
        c = b + an / c;
        let delta = c * d;
        h *= delta;
        if (delta - 1.0).abs() < EPS {
            break;
        }
    }
    h
}

/// Generalised exponential integral `E_n(x) = ∫₁^∞ e^{−xt} t^{−n} dt` (dimensionless) for n ≥ 0 and x ≥ 0
/// (`E_n(0) = 1/(n−1)` for n ≥ 2; +∞ for n ≤ 1). Returns NaN for x < 0.
pub fn expint(n: u32, x: f64) -> f64 {
    if x.is_nan() || x < 0.0 {
        return f64::NAN;
    }
    if n == 0 {
        return (-x).exp() / x;
    }
    if x == 0.0 {
        return if n > 1 { 1.0 / (n as f64 - 1.0) } else { f64::INFINITY };
    }
    if x > 1.0 {
        (-x).exp() * scaled_expint_continued_fraction(n, x)
    } else {
        expint_series(n, x)
    }
}

/// Scaled generalised exponential integral `e^{x} E_n(x)` (dimensionless), finite for large x where
/// `E_n` underflows; ≈ 1/(x + n) as x → ∞.
pub fn scaled_expint(n: u32, x: f64) -> f64 {
    if x.is_nan() || x < 0.0 {
        return f64::NAN;
    }
    if n == 0 {
        return 1.0 / x;
    }
    if x > 1.0 {
        scaled_expint_continued_fraction(n, x)
    } else {
        x.exp() * expint(n, x)
    }
}

/// Exponential integral `E₁(x) = ∫ₓ^∞ e^{−t}/t dt` (dimensionless), x > 0.
pub fn expint1(x: f64) -> f64 {
    expint(1, x)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// (x, erfc x, erfcx x) from mpmath 1.3 at 30-digit precision, rounded to the nearest double.
    const ERFC_TABLE: [(f64, f64, f64); 15] = [
        (1e-10, 0.999999999887162, 0.999999999887162),
        (0.1, 0.887537083981715, 0.8964569799691267),
        (0.3, 0.6713732405408726, 0.7345993345676551),
        (0.5, 0.4795001221869535, 0.6156903441929259),
        (0.7, 0.32219880616258156, 0.525930337349441),
        (1.0, 0.15729920705028513, 0.427583576155807),
        (1.5, 0.033894853524689274, 0.3215854164543175),
        (2.0, 0.004677734981047266, 0.25539567631050575),
        (3.0, 2.209049699858544e-05, 0.17900115118138996),
        (5.0, 1.537459794428035e-12, 0.11070463773306863),
        (10.0, 2.088487583762545e-45, 0.05614099274382259),
        (20.0, 5.395865611607901e-176, 0.02817434874105132),
        (26.0, 5.663192408856143e-296, 0.021683584850562907),
        (-0.5, 1.5204998778130465, 1.952360489182557),
        (-2.0, 1.9953222650189526, 108.94090438997797),
    ];

    #[test]
    fn erfc_and_erfcx_match_high_precision_values() {
        for &(x, c, cx) in &ERFC_TABLE {
            assert!(rel_diff(erfc(x), c) < 1e-15, "erfc({x}) = {:e}, want {c:e}", erfc(x));
            assert!(rel_diff(erfcx(x), cx) < 1.5e-15, "erfcx({x}) = {:e}, want {cx:e}", erfcx(x));
        }
    }

    #[test]
    fn erfc_is_continuous_across_the_method_switch() {
        let below = erfc(SERIES_LIMIT * (1.0 - 1e-15));
        let above = erfc(SERIES_LIMIT);
        assert!(rel_diff(below, above) < 2e-15, "{below:e} vs {above:e}");
        assert!((erf(0.3) + erf(-0.3)).abs() < 1e-17);
    }

    /// REFERENCES.md item D, "Values of 1 − e^t erfc(√t)" (10 digits).
    #[test]
    fn sphere_kernel_values_of_item_d() {
        let table = [
            (0.01, 0.103_543_020_0),
            (0.1, 0.276_421_561_5),
            (1.0, 0.572_416_423_8),
            (10.0, 0.829_422_281_7),
            (100.0, 0.943_859_007_3),
        ];
        for (t, want) in table {
            let got = 1.0 - erfcx(f64::sqrt(t));
            assert!((got - want).abs() < 6e-11, "t = {t}: {got} vs {want}");
        }
    }

    /// (n, x, E_n x, e^x E_n x) from mpmath 1.3 at 30-digit precision, rounded to the nearest double.
    const EXPINT_TABLE: [(u32, f64, f64, f64); 14] = [
        (1, 1e-3, 6.331539364136149, 6.337874070325488),
        (1, 0.5, 0.5597735947761608, 0.9229106324837305),
        (1, 1.0, 0.21938393439552026, 0.5963473623231941),
        (1, 2.0, 0.04890051070806112, 0.3613286168882226),
        (1, 10.0, 4.156968929685325e-06, 0.09156333393978808),
        (2, 0.5, 0.326643862324553, 0.5385446837581348),
        (4, 0.1, 0.28773609074837725, 0.31799755957588194),
        (5, 0.1, 0.21901595224028045, 0.24205006101060295),
        (4, 3.0, 0.007665042899931922, 0.1539565021844001),
        (5, 3.0, 0.006697984917017044, 0.1345326233616999),
        (4, 30.0, 2.7613332813973074e-15, 0.02950891792276986),
        (5, 100.0, 3.544508568894701e-46, 0.009528054243360024),
        (3, 1.0, 0.10969196719776014, 0.29817368116159704),
        (10, 0.7, 0.05078145004298085, 0.10226128251332943),
    ];

    #[test]
    fn expint_matches_high_precision_values() {
        for &(n, x, e, ex) in &EXPINT_TABLE {
            assert!(rel_diff(expint(n, x), e) < 1e-14, "E_{n}({x}) = {:e}, want {e:e}", expint(n, x));
            assert!(rel_diff(scaled_expint(n, x), ex) < 1e-14, "e^x E_{n}({x})");
        }
        assert_eq!(expint(3, 0.0), 0.5);
        assert!(rel_diff(expint1(2.0), 0.04890051070806112) < 1e-14);
    }
}
