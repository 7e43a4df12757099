//! Counting noise of a front–back direction estimate (Berg & Purcell 1977, Biophys. J. 20, 193: binding events
//! are Poisson counts).
//!
//! With independent Poisson counts N₁ (front) and N₂ (back) over the integration time, the contrast
//! `Â = (N₁ − N₂)/(N₁ + N₂)` has, by the delta method, `Var(Â) ≈ (1 − Â²)/(N₁ + N₂)` (derived in
//! shared/REFERENCES.md item H and checked there by Monte Carlo). The direction error is the standard error
//! over the magnitude, `√Var(Â)/|Â|`: above 1 the cell cannot tell front from back in that time.

/// Front–back contrast and its relative counting error from expected counts `front`, `back` (≥ 0).
/// Returns `(contrast, direction_error)`; the error is +∞ when the contrast is zero or nothing is counted.
pub fn front_back_contrast(front: f64, back: f64) -> (f64, f64) {
    let total = front + back;
    if total <= 0.0 {
        return (0.0, f64::INFINITY);
    }
    let contrast = (front - back) / total;
    let variance = (1.0 - contrast * contrast).max(0.0) / total;
    let error = if contrast == 0.0 { f64::INFINITY } else { variance.sqrt() / contrast.abs() };
    (contrast, error)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn delta_method_variance_matches_reference_table() {
        // shared/REFERENCES.md item H, Monte Carlo table: N₁ = 1100, N₂ = 900 → Var(Â) = 4.95e-4 (formula).
        let (a, e) = front_back_contrast(1100.0, 900.0);
        assert!((a - 0.1).abs() < 1e-15);
        let var = (e * a).powi(2);
        assert!((var - 4.95e-4).abs() < 1e-7, "variance {var}");
        // Equal counts: no contrast, infinite error.
        assert_eq!(front_back_contrast(10.0, 10.0).1, f64::INFINITY);
        assert_eq!(front_back_contrast(0.0, 0.0).1, f64::INFINITY);
    }
}
