//! Per-cell aggregates of a case for the sweep table: the 10th, 50th and 90th percentiles of a per-cell
//! quantity over the cells of the case.
//!
//! Percentiles are the shared sample quantiles ([`numkit::quantile`], Hyndman & Fan 1996 definition 7): NaN
//! values are left out; ±∞ take part (a cell with zero contrast has an infinite direction error).

use numkit::{quantile_sorted, sorted_without_nan};

/// The (p10, median, p90) of `values`.
pub fn p10_median_p90(values: &[f64]) -> [f64; 3] {
    let sorted = sorted_without_nan(values);
    [0.1, 0.5, 0.9].map(|p| quantile_sorted(&sorted, p))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_definition_7() {
        // Reference values computed by hand from h = (n − 1)p (Hyndman & Fan 1996, definition 7).
        let x = [3.0, 1.0, 4.0, 1.0, 5.0, 9.0, 2.0, 6.0]; // sorted: 1 1 2 3 4 5 6 9
        let [p10, median, p90] = p10_median_p90(&x);
        assert!((p10 - 1.0).abs() < 1e-15); // h = 0.7 between 1 and 1
        assert_eq!(median, 3.5); // h = 3.5
        assert!((p90 - 6.9).abs() < 1e-12); // h = 6.3: 6 + 0.3·3
    }

    #[test]
    fn nan_is_left_out_and_infinity_kept() {
        assert!(p10_median_p90(&[]).iter().all(|x| x.is_nan()));
        assert!(p10_median_p90(&[f64::NAN]).iter().all(|x| x.is_nan()));
        assert_eq!(p10_median_p90(&[2.0, f64::NAN, 4.0])[1], 3.0);
        // h = 0.2 between 1 and ∞ is ∞; h = 1 and 1.8 lie on ∞.
        assert_eq!(p10_median_p90(&[1.0, f64::INFINITY, f64::INFINITY]), [f64::INFINITY; 3]);
        assert_eq!(p10_median_p90(&[1.0, 2.0, f64::INFINITY])[0], 1.2);
        assert_eq!(p10_median_p90(&[7.0]), [7.0; 3]);
    }
}
