//! Sample quantiles by linear interpolation between order statistics: for sorted x₀ ≤ … ≤ x_{n−1},
//! `Q(p) = x_⌊h⌋ + (h − ⌊h⌋)(x_⌊h⌋+1 − x_⌊h⌋)` with `h = (n − 1)p` (Hyndman & Fan 1996, "Sample quantiles in
//! statistical packages", The American Statistician 50(4), definition 7; the default of R and NumPy).
//!
//! Edge behaviour, the same for every caller: `p` is clamped to [0, 1]; no values give NaN; one value is
//! every quantile; equal neighbours (also both infinite) are returned without interpolation, so ±∞ take part
//! without producing ∞ − ∞ = NaN; NaN values are left out by [`quantile`] (the caller of [`quantile_sorted`]
//! has already done so).

/// The quantile `p` ∈ [0, 1] of `values`, NaN values left out (NaN when none is left).
pub fn quantile(values: &[f64], p: f64) -> f64 {
    quantile_sorted(&sorted_without_nan(values), p)
}

/// `values` without NaN, sorted ascending (−∞ first, +∞ last).
pub fn sorted_without_nan(values: &[f64]) -> Vec<f64> {
    let mut sorted: Vec<f64> = values.iter().copied().filter(|x| !x.is_nan()).collect();
    sorted.sort_by(f64::total_cmp);
    sorted
}

/// [`quantile`] of values already sorted ascending and free of NaN.
pub fn quantile_sorted(sorted: &[f64], p: f64) -> f64 {
    match sorted.len() {
        0 => f64::NAN,
        1 => sorted[0],
        n => {
            let h = (n - 1) as f64 * p.clamp(0.0, 1.0);
            let lo = h.floor() as usize;
            let hi = (lo + 1).min(n - 1);
            let (a, b) = (sorted[lo], sorted[hi]);
            let t = h - lo as f64;
            if a == b || t == 0.0 {
                a
            } else {
                a + t * (b - a)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interpolates_between_order_statistics() {
        // R's quantile(c(1, 2, 4, 8), type = 7) at 0.1, 0.5, 0.9: 1.3, 3, 6.8 (hand-computed: h = 0.3, 1.5, 2.7).
        let v = [8.0, 1.0, 4.0, 2.0];
        for (p, want) in [(0.1, 1.3), (0.5, 3.0), (0.9, 6.8), (0.0, 1.0), (1.0, 8.0)] {
            assert!((quantile(&v, p) - want).abs() < 1e-12, "p = {p}: {}", quantile(&v, p));
        }
    }

    #[test]
    fn edge_behaviour() {
        assert!(quantile(&[], 0.5).is_nan());
        assert!(quantile(&[f64::NAN], 0.5).is_nan());
        assert_eq!(quantile(&[3.0, f64::NAN], 0.9), 3.0);
        assert_eq!(quantile(&[1.0, 2.0], -1.0), 1.0);
        assert_eq!(quantile(&[1.0, 2.0], 7.0), 2.0);
        let with_infinity = [1.0, f64::INFINITY, f64::INFINITY];
        assert_eq!(quantile(&with_infinity, 0.75), f64::INFINITY);
        assert_eq!(quantile(&with_infinity, 0.25), f64::INFINITY);
        assert_eq!(quantile(&with_infinity, 0.0), 1.0);
        // At an order statistic an infinite upper neighbour does not leak in.
        assert_eq!(quantile(&[1.0, 2.0, f64::INFINITY], 0.5), 2.0);
    }
}
