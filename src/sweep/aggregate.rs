//! Per-cell aggregates of a case for the sweep table: the 10th, 50th and 90th percentiles of a per-cell
//! quantity over the cells of the case.
//!
//! Percentiles interpolate linearly between order statistics: for sorted x₀ ≤ … ≤ x_{n−1},
//! `Q(p) = x_⌊h⌋ + (h − ⌊h⌋)(x_⌊h⌋+1 − x_⌊h⌋)` with `h = (n − 1)p` (Hyndman & Fan 1996, "Sample quantiles in
//! statistical packages", The American Statistician 50(4), definition 7; the default of R and NumPy).
//! NaN values are left out; ±∞ take part (a cell with zero contrast has an infinite direction error).

/// The percentile `p` ∈ [0, 1] of `values` (NaN when there is no non-NaN value).
pub fn percentile(values: &[f64], p: f64) -> f64 {
    let mut sorted: Vec<f64> = values.iter().copied().filter(|x| !x.is_nan()).collect();
    sorted.sort_by(f64::total_cmp);
    percentile_sorted(&sorted, p)
}

/// [`percentile`] of values already sorted and free of NaN.
pub fn percentile_sorted(sorted: &[f64], p: f64) -> f64 {
    match sorted.len() {
        0 => f64::NAN,
        1 => sorted[0],
        n => {
            let h = (n - 1) as f64 * p.clamp(0.0, 1.0);
            let lo = h.floor() as usize;
            let hi = (lo + 1).min(n - 1);
            let (a, b) = (sorted[lo], sorted[hi]);
            let t = h - lo as f64;
            // Equal neighbours (also both infinite) need no interpolation, and ∞ − ∞ would give NaN.
            if a == b || t == 0.0 {
                a
            } else {
                a + t * (b - a)
            }
        }
    }
}

/// The (p10, median, p90) of `values`.
pub fn p10_median_p90(values: &[f64]) -> [f64; 3] {
    let mut sorted: Vec<f64> = values.iter().copied().filter(|x| !x.is_nan()).collect();
    sorted.sort_by(f64::total_cmp);
    [0.1, 0.5, 0.9].map(|p| percentile_sorted(&sorted, p))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_definition_7() {
        // Reference values computed by hand from h = (n − 1)p (Hyndman & Fan 1996, definition 7).
        let x = [3.0, 1.0, 4.0, 1.0, 5.0, 9.0, 2.0, 6.0]; // sorted: 1 1 2 3 4 5 6 9
        assert_eq!(percentile(&x, 0.5), 3.5); // h = 3.5
        assert!((percentile(&x, 0.1) - 1.0).abs() < 1e-15); // h = 0.7 between 1 and 1
        assert!((percentile(&x, 0.9) - 6.9).abs() < 1e-12); // h = 6.3: 6 + 0.3·3
        assert_eq!(percentile(&x, 0.0), 1.0);
        assert_eq!(percentile(&x, 1.0), 9.0);
    }

    #[test]
    fn nan_is_left_out_and_infinity_kept() {
        assert!(percentile(&[], 0.5).is_nan());
        assert!(percentile(&[f64::NAN], 0.5).is_nan());
        assert_eq!(percentile(&[2.0, f64::NAN, 4.0], 0.5), 3.0);
        // h = 0.2 between 1 and ∞ is ∞; h = 1 and 1.8 lie on ∞.
        assert_eq!(p10_median_p90(&[1.0, f64::INFINITY, f64::INFINITY]), [f64::INFINITY; 3]);
        assert_eq!(p10_median_p90(&[1.0, 2.0, f64::INFINITY])[0], 1.2);
        assert_eq!(p10_median_p90(&[7.0]), [7.0; 3]);
    }
}
