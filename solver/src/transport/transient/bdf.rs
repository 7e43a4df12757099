//! The time derivative: variable-step BDF2 (BDF1 after a start or an event), and its embedded error estimate.
//!
//! `M (α₀ cⁿ⁺¹ + α₁ cⁿ + α₂ cⁿ⁻¹)/Δtₙ + A cⁿ⁺¹ = b(tₙ₊₁)`, M = diag(φ h³) the fluid volume of each grid cell.
//! With ω = Δtₙ/Δtₙ₋₁: `α₀ = (1 + 2ω)/(1 + ω)`, `α₁ = −(1 + ω)`, `α₂ = ω²/(1 + ω)` (the derivative at tₙ₊₁ of
//! the quadratic through the last three solutions; Hairer & Wanner 1996 §III.5 [memory]); zero-stable for
//! ω < 1 + √2, so step growth is capped at 2. BDF1 (`α = (1, −1, 0)`) takes the first step after the start
//! and after every event (secretion start, flow change, window start): one first-order step contributes a
//! local error O(Δt²) only, so the global error stays second order (common practice).

/// BDF coefficients `[α₀, α₁, α₂]` for step `dt` after a step `previous` (None: first-order step).
pub fn coefficients(dt: f64, previous: Option<f64>) -> [f64; 3] {
    match previous {
        None => [1.0, -1.0, 0.0],
        Some(prev) => {
            let w = dt / prev;
            [(1.0 + 2.0 * w) / (1.0 + w), -(1.0 + w), w * w / (1.0 + w)]
        }
    }
}

/// Largest ratio of consecutive steps (zero stability of variable-step BDF2 needs < 1 + √2).
pub const MAX_STEP_GROWTH: f64 = 2.0;

/// Factor `k` in `error ≈ k · |c_corrector − c_predictor|` of the Milne device for BDF2 with the quadratic
/// extrapolation through the last three solutions as predictor. `steps` = [Δtₙ, Δtₙ₋₁, Δtₙ₋₂].
///
/// Both error constants come from applying the formulas to `p(t) = (t − tₙ₊₁)³/6` (third derivative 1): the
/// corrector's local error is `R/α₀` with `R = α₁ p(tₙ) + α₂ p(tₙ₋₁)`, the predictor's is
/// `Δtₙ(Δtₙ + Δtₙ₋₁)(Δtₙ + Δtₙ₋₁ + Δtₙ₋₂)/6`. Constant steps give 2/11 (common practice).
pub fn milne_factor(steps: [f64; 3]) -> f64 {
    let [h0, h1, h2] = steps;
    let alpha = coefficients(h0, Some(h1));
    let p = |s: f64| -s.powi(3) / 6.0;
    let corrector = (alpha[1] * p(h0) + alpha[2] * p(h0 + h1)) / alpha[0];
    let predictor = h0 * (h0 + h1) * (h0 + h1 + h2) / 6.0;
    (corrector / (predictor - corrector)).abs()
}

/// Quadratic extrapolation to `tₙ₊₁` through `(tₙ, cⁿ)`, `(tₙ₋₁, cⁿ⁻¹)`, `(tₙ₋₂, cⁿ⁻²)`: Lagrange weights.
pub fn quadratic_extrapolation_weights(steps: [f64; 3]) -> [f64; 3] {
    let [h0, h1, h2] = steps;
    // Nodes relative to tₙ₊₁.
    let (t0, t1, t2) = (-h0, -h0 - h1, -h0 - h1 - h2);
    [t1 * t2 / ((t0 - t1) * (t0 - t2)), t0 * t2 / ((t1 - t0) * (t1 - t2)), t0 * t1 / ((t2 - t0) * (t2 - t1))]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn constant_step_values() {
        let a = coefficients(0.1, Some(0.1));
        assert!((a[0] - 1.5).abs() < 1e-15 && (a[1] + 2.0).abs() < 1e-15 && (a[2] - 0.5).abs() < 1e-15);
        assert!((milne_factor([1.0, 1.0, 1.0]) - 2.0 / 11.0).abs() < 1e-14);
        let w = quadratic_extrapolation_weights([1.0, 1.0, 1.0]);
        assert!((w[0] - 3.0).abs() < 1e-14 && (w[1] + 3.0).abs() < 1e-14 && (w[2] - 1.0).abs() < 1e-14);
    }

    /// Variable-step BDF2 differentiates quadratics exactly, and the extrapolation reproduces them.
    #[test]
    fn exact_for_quadratics() {
        let y = |t: f64| 2.0 - 3.0 * t + 0.7 * t * t;
        let dy = |t: f64| -3.0 + 1.4 * t;
        let (h0, h1, h2) = (0.3, 0.17, 0.4);
        let t = 1.1;
        let a = coefficients(h0, Some(h1));
        let lhs = (a[0] * y(t) + a[1] * y(t - h0) + a[2] * y(t - h0 - h1)) / h0;
        assert!((lhs - dy(t)).abs() < 1e-12, "{lhs} vs {}", dy(t));
        let w = quadratic_extrapolation_weights([h0, h1, h2]);
        let p = w[0] * y(t - h0) + w[1] * y(t - h0 - h1) + w[2] * y(t - h0 - h1 - h2);
        assert!((p - y(t)).abs() < 1e-12);
    }
}
