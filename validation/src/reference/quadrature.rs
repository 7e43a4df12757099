//! Numerical quadrature for the few reference values that have no closed form (Duhamel's integral for the
//! decaying sphere, J_β for Brinkman flow).
//!
//! Method: double-exponential (tanh–sinh) quadrature, Takahasi & Mori (1974, *Publ. RIMS Kyoto Univ.* 9,
//! 721–741) [memory]. It converges exponentially for integrands analytic inside the interval, also with
//! integrable endpoint singularities such as the √s start of a switched-on source; step halving reuses
//! every earlier node. Semi-infinite ranges are mapped to (0, 1] by `x = x₀/u` (common practice).

use super::ReferenceError;
use std::f64::consts::FRAC_PI_2;

/// Largest abscissa |t| of the tanh–sinh rule; beyond it the weights are below 1e-300.
const T_MAX: f64 = 3.2;
/// Number of step halvings before giving up.
const MAX_LEVELS: u32 = 12;

/// ∫_a^b f(x) dx by tanh–sinh quadrature to relative tolerance `rel_tol` (convergence is judged on the change
/// between successive step halvings, which overestimates the error of the finer level). The integrand is
/// never evaluated at the end points.
pub fn integrate<F: Fn(f64) -> f64>(f: F, a: f64, b: f64, rel_tol: f64) -> Result<f64, ReferenceError> {
    let half = 0.5 * (b - a);
    // Node pair at parameter t: distance from each end point is half·(1 − tanh(π/2 sinh t)), formed without
    // cancellation, and the weight is (π/2) cosh t / cosh²(π/2 sinh t).
    let pair = |t: f64| -> f64 {
        let u = FRAC_PI_2 * t.sinh();
        let e = (-2.0 * u).exp();
        let gap = half * 2.0 * e / (1.0 + e); // half·(1 − tanh u)
        let cosh_u = u.cosh();
        let w = FRAC_PI_2 * t.cosh() / (cosh_u * cosh_u);
        if w == 0.0 || gap == 0.0 {
            return 0.0;
        }
        w * (f(a + gap) + f(b - gap))
    };
    let mut h = 1.0;
    let mut sum = FRAC_PI_2 * f(a + half);
    let mut k = 1;
    while k as f64 * h <= T_MAX {
        sum += pair(k as f64 * h);
        k += 1;
    }
    let mut estimate = half * h * sum;
    let mut change = f64::INFINITY;
    for _ in 0..MAX_LEVELS {
        h *= 0.5;
        let mut k = 1;
        while k as f64 * h <= T_MAX {
            sum += pair(k as f64 * h);
            k += 2; // odd multiples of the new step are the new nodes
        }
        let refined = half * h * sum;
        change = (refined - estimate).abs();
        estimate = refined;
        if !estimate.is_finite() {
            break;
        }
        if change <= rel_tol * estimate.abs() {
            return Ok(estimate);
        }
    }
    Err(ReferenceError::QuadratureNoConvergence { estimate, change })
}

/// ∫_{x₀}^∞ f(x) dx for x₀ > 0, by the substitution x = x₀/u: ∫₀¹ f(x₀/u) x₀/u² du.
pub fn integrate_to_infinity<F: Fn(f64) -> f64>(f: F, x0: f64, rel_tol: f64) -> Result<f64, ReferenceError> {
    integrate(|u| f(x0 / u) * x0 / (u * u), 0.0, 1.0, rel_tol)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    #[test]
    fn integrates_smooth_singular_and_infinite_ranges() {
        let smooth = integrate(|x| x.exp(), 0.0, 1.0, 1e-13).unwrap();
        assert!(rel_diff(smooth, std::f64::consts::E - 1.0) < 1e-14);
        // Endpoint singularity of the derivative, as in Duhamel integrals of a switched-on source.
        let sqrt = integrate(|x| x.sqrt(), 0.0, 4.0, 1e-13).unwrap();
        assert!(rel_diff(sqrt, 16.0 / 3.0) < 1e-14);
        let tail = integrate_to_infinity(|x| (-x).exp() / (x * x), 1.0, 1e-13).unwrap();
        // ∫₁^∞ e^{−x} x^{−2} dx = E₂(1) = 0.14849550677592204792 (mpmath)
        assert!(rel_diff(tail, 0.148_495_506_775_922_05) < 1e-13, "{tail}");
    }

    #[test]
    fn reports_non_convergence() {
        let r = integrate(|x| 1.0 / x, 0.0, 1.0, 1e-14);
        assert!(matches!(r, Err(ReferenceError::QuadratureNoConvergence { .. })));
    }
}
