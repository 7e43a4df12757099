//! Gauss–Legendre quadrature on [0, 1]: plain, composite over equal panels, and with a smoothing change of
//! variable for integrands that have algebraic endpoint singularities such as `(x − x_b)^{1/2}` or
//! `(x − x_b)^{3/2}`.
//!
//! The nodes are the roots of the Legendre polynomial P_n, found by Newton's iteration from the Chebyshev-like
//! initial guess `cos(π (i − ¼)/(n + ½))`, with weights `2 / ((1 − x²) P_n'(x)²)` (common practice; e.g.
//! Abramowitz & Stegun 1964, 25.4.29 [memory]).

use std::sync::OnceLock;

/// Nodes per analytic piece of the shared rule.
pub const SHARED_ORDER: usize = 16;

/// Nodes and weights of the n-point Gauss–Legendre rule mapped to [0, 1].
#[derive(Debug)]
pub struct GaussLegendre {
    pub nodes: Vec<f64>,
    pub weights: Vec<f64>,
}

impl GaussLegendre {
    pub fn new(n: usize) -> Self {
        assert!(n >= 1, "a quadrature rule needs at least one node");
        let mut nodes = Vec::with_capacity(n);
        let mut weights = Vec::with_capacity(n);
        for i in 1..=n {
            let mut x = (std::f64::consts::PI * (i as f64 - 0.25) / (n as f64 + 0.5)).cos();
            let mut derivative = 1.0;
            for _ in 0..100 {
                // Three-term recurrence (k+1) P_{k+1} = (2k+1) x P_k − k P_{k−1}.
                let (mut p0, mut p1) = (1.0, x);
                for k in 1..n {
                    let p2 = ((2 * k + 1) as f64 * x * p1 - k as f64 * p0) / (k + 1) as f64;
                    p0 = p1;
                    p1 = p2;
                }
                let pn = if n == 1 { x } else { p1 };
                let pn_minus_1 = if n == 1 { 1.0 } else { p0 };
                derivative = n as f64 * (x * pn - pn_minus_1) / (x * x - 1.0);
                let step = pn / derivative;
                x -= step;
                if step.abs() < 1e-16 {
                    break;
                }
            }
            let w = 2.0 / ((1.0 - x * x) * derivative * derivative);
            // Map [−1, 1] → [0, 1].
            nodes.push(0.5 * (1.0 - x));
            weights.push(0.5 * w);
        }
        GaussLegendre { nodes, weights }
    }

    /// Shared 16-point rule: with the smoothing map below it is accurate enough for the slice areas of a ball
    /// cut by a box (checked in the mesh crate's `ball_box` tests).
    pub fn shared() -> &'static GaussLegendre {
        static RULE: OnceLock<GaussLegendre> = OnceLock::new();
        RULE.get_or_init(|| GaussLegendre::new(SHARED_ORDER))
    }

    /// `∫_lo^hi f(x) dx` by this rule on each of `panels` equal panels (composite rule).
    pub fn integrate_composite(&self, lo: f64, hi: f64, panels: usize, f: impl Fn(f64) -> f64) -> f64 {
        let width = (hi - lo) / panels as f64;
        (0..panels)
            .map(|p| {
                let start = lo + p as f64 * width;
                self.nodes.iter().zip(&self.weights).map(|(t, w)| w * f(start + t * width)).sum::<f64>()
                    * width
            })
            .sum()
    }

    /// `∫_p^q f(x) dx` with the substitution `x = p + (q − p)(3t² − 2t³)`, whose Jacobian `6t(1 − t)` vanishes
    /// at both ends, turning endpoint terms `(x − p)^{k/2}` into analytic functions of t.
    pub fn integrate_smoothed(&self, p: f64, q: f64, mut f: impl FnMut(f64) -> f64) -> f64 {
        let length = q - p;
        let mut sum = 0.0;
        for (&t, &w) in self.nodes.iter().zip(&self.weights) {
            let x = p + length * t * t * (3.0 - 2.0 * t);
            sum += w * 6.0 * t * (1.0 - t) * f(x);
        }
        sum * length
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn integrates_polynomials_exactly_and_weights_sum_to_one() {
        let rule = GaussLegendre::new(8);
        let total: f64 = rule.weights.iter().sum();
        assert!((total - 1.0).abs() < 1e-15);
        // Degree 15 is the highest integrated exactly by 8 points.
        let integral: f64 = rule.nodes.iter().zip(&rule.weights).map(|(x, w)| w * x.powi(15)).sum();
        assert!((integral - 1.0 / 16.0).abs() < 1e-15);
    }

    #[test]
    fn composite_rule_converges_on_a_smooth_integrand() {
        // ∫₀^π sin x dx = 2; five points per panel integrate degree 9 exactly, so 8 panels are ample.
        let rule = GaussLegendre::new(5);
        let got = rule.integrate_composite(0.0, std::f64::consts::PI, 8, f64::sin);
        assert!((got - 2.0).abs() < 1e-13, "{got}");
        let one_panel = rule.integrate_composite(0.0, 2.0, 1, |x| x.powi(9));
        assert!((one_panel - 102.4).abs() < 1e-12, "{one_panel}");
    }

    #[test]
    fn smoothed_rule_handles_endpoint_power_singularity() {
        // ∫₀¹ x^{3/2} dx = 2/5 and ∫₀¹ √(1 − x) dx = 2/3.
        let rule = GaussLegendre::shared();
        let a = rule.integrate_smoothed(0.0, 1.0, |x| x.powf(1.5));
        let b = rule.integrate_smoothed(0.0, 1.0, |x| (1.0 - x).max(0.0).sqrt());
        assert!((a - 0.4).abs() < 1e-13, "{a}");
        assert!((b - 2.0 / 3.0).abs() < 1e-12, "{b}");
    }
}
