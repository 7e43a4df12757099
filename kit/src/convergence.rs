//! Order of convergence observed between two resolutions.

/// Observed order `p = ln(e_coarse / e_fine) / ln r` from errors `coarse` and `fine` on grids whose spacings
/// are in ratio `refinement` = h_coarse / h_fine > 1 (common practice, e.g. Roache 1998 [memory]).
pub fn observed_order(coarse: f64, fine: f64, refinement: f64) -> f64 {
    (coarse / fine).ln() / refinement.ln()
}

#[cfg(test)]
mod tests {
    #[test]
    fn second_order_errors_give_two() {
        let error = |h: f64| 3.0 * h * h;
        assert!((super::observed_order(error(0.2), error(0.1), 2.0) - 2.0).abs() < 1e-12);
        assert!((super::observed_order(error(0.3), error(0.2), 1.5) - 2.0).abs() < 1e-12);
    }
}
