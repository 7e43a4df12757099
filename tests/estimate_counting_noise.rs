//! The direction error that `run` reports (`solver::post::counting_noise::front_back_contrast`, the delta-method
//! Poisson error of Berg & Purcell 1977-type counting, REFERENCES.md item H) against a seeded Monte Carlo of
//! independent Poisson counts (`validation::reference::counting_noise::SplitMix64`).

use solver::post::counting_noise::front_back_contrast;
use validation::reference::counting_noise::SplitMix64;

#[test]
fn direction_error_matches_monte_carlo_of_poisson_counts() {
    // (front, back) expected counts: a strong, a weak and a low-count contrast.
    for (i, (front, back)) in [(1100.0, 900.0), (5050.0, 4950.0), (60.0, 40.0)].into_iter().enumerate() {
        let (contrast, error) = front_back_contrast(front, back);
        let mut rng = SplitMix64::new(0xC0FFEE + i as u64);
        let trials = 100_000;
        let samples: Vec<f64> = (0..trials)
            .filter_map(|_| {
                let (n1, n2) = (rng.poisson(front) as f64, rng.poisson(back) as f64);
                (n1 + n2 > 0.0).then(|| (n1 - n2) / (n1 + n2))
            })
            .collect();
        let n = samples.len() as f64;
        let mean = samples.iter().sum::<f64>() / n;
        let variance = samples.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
        let mc_error = variance.sqrt() / mean.abs();
        // Sampling error of the MC ratio: relative σ/√(2n) of the standard deviation plus that of the mean.
        let rel_se = (1.0 / (2.0 * n)).sqrt() + variance.sqrt() / (n.sqrt() * mean.abs());
        // The delta method itself is first order in 1/N: allow its O(1/N) bias on top of 4 standard errors.
        let allowed = 4.0 * rel_se + 2.0 / (front + back);
        assert!(
            (mc_error / error - 1.0).abs() < allowed,
            "N = ({front}, {back}): formula {error:.5} vs Monte Carlo {mc_error:.5} (allowed relative {allowed:.4})"
        );
        assert!((mean / contrast - 1.0).abs() < 4.0 * variance.sqrt() / (n.sqrt() * contrast.abs()));
    }
}
