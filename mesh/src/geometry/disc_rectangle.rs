//! Exact area of a disc intersected with an axis-aligned rectangle: the blocked part of a grid face cut by a
//! sphere.
//!
//! With the disc centred at the origin, radius r, and `s(y) = √(r² − y²)` (zero for |y| > r), the chord of the
//! disc at abscissa y covers `[−s, s]`, and its length inside `[z₀, z₁]` is
//! `clip(s; z₀, z₁) − clip(−s; z₀, z₁)`. Writing `clip(s; lo, hi) = lo + (s − lo)₊ − (s − hi)₊` turns the area
//! into four integrals of the form
//!
//! ```text
//! J(c) = ∫_{y₀}^{y₁} (s(y) − c)₊ dy ,
//! A    = (z₀ − z₁)(y₁ − y₀) + J(z₀) − J(z₁) + J(−z₁) − J(−z₀),
//! ```
//!
//! each of which is closed-form through `S(u) = ∫₀ᵘ √(r² − t²) dt = ½ (u √(r² − u²) + r² asin(u/r))`
//! (elementary calculus). Rounding error is a few ulps of `(|z| + r)·(y₁ − y₀)`.

/// `S(u) = ∫₀ᵘ √(r² − t²) dt` for |u| ≤ r (u is clamped into [−r, r]).
#[inline]
fn semicircle_primitive(u: f64, r: f64) -> f64 {
    let u = u.clamp(-r, r);
    let ratio = (u / r).clamp(-1.0, 1.0);
    0.5 * (u * (r * r - u * u).max(0.0).sqrt() + r * r * ratio.asin())
}

/// `J(c) = ∫_{y0}^{y1} max(√(r² − y²) − c, 0) dy` (the integrand is zero where |y| > r), given
/// `half_chord_integral = ∫_{y0}^{y1} √(r² − y²) dy`.
#[inline]
fn excess_integral(c: f64, y0: f64, y1: f64, r: f64, half_chord_integral: f64) -> f64 {
    if c < 0.0 {
        // The chord exceeds c everywhere; where |y| > r the integrand is −c (s = 0 there).
        half_chord_integral - c * (y1 - y0)
    } else if c >= r {
        0.0
    } else {
        let w = (r * r - c * c).sqrt();
        let u0 = y0.max(-w);
        let u1 = y1.min(w);
        if u1 <= u0 {
            0.0
        } else {
            semicircle_primitive(u1, r) - semicircle_primitive(u0, r) - c * (u1 - u0)
        }
    }
}

/// Area (m²) of the disc of radius `r` centred at `centre` intersected with the rectangle
/// `[lower[0], upper[0]] × [lower[1], upper[1]]` (all coordinates in the plane of the disc).
pub fn disc_rectangle_area(r: f64, centre: [f64; 2], lower: [f64; 2], upper: [f64; 2]) -> f64 {
    if r <= 0.0 {
        return 0.0;
    }
    let y0 = lower[0] - centre[0];
    let y1 = upper[0] - centre[0];
    let z0 = lower[1] - centre[1];
    let z1 = upper[1] - centre[1];
    if y1 <= -r || y0 >= r || z1 <= -r || z0 >= r {
        return 0.0;
    }
    let s = semicircle_primitive(y1, r) - semicircle_primitive(y0, r);
    let area = (z0 - z1) * (y1 - y0) + excess_integral(z0, y0, y1, r, s) - excess_integral(z1, y0, y1, r, s)
        + excess_integral(-z1, y0, y1, r, s)
        - excess_integral(-z0, y0, y1, r, s);
    area.clamp(0.0, (y1 - y0) * (z1 - z0))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::f64::consts::PI;

    /// Midpoint-rule area on a fine lattice: an independent, slowly converging reference.
    fn brute_force(r: f64, c: [f64; 2], lo: [f64; 2], hi: [f64; 2], n: usize) -> f64 {
        let dy = (hi[0] - lo[0]) / n as f64;
        let mut area = 0.0;
        for i in 0..n {
            // Exact chord length per strip at the strip midpoint: error O(dy²).
            let y = lo[0] + (i as f64 + 0.5) * dy - c[0];
            if y.abs() < r {
                let s = (r * r - y * y).sqrt();
                let len = ((c[1] + s).min(hi[1]) - (c[1] - s).max(lo[1])).max(0.0);
                area += len * dy;
            }
        }
        area
    }

    #[test]
    fn whole_disc_half_disc_and_quarter_disc() {
        let r = 0.7;
        assert!((disc_rectangle_area(r, [0.0, 0.0], [-1.0, -1.0], [1.0, 1.0]) - PI * r * r).abs() < 1e-15);
        assert!(
            (disc_rectangle_area(r, [0.0, 0.0], [0.0, -1.0], [1.0, 1.0]) - 0.5 * PI * r * r).abs() < 1e-15
        );
        assert!(
            (disc_rectangle_area(r, [0.0, 0.0], [0.0, 0.0], [1.0, 1.0]) - 0.25 * PI * r * r).abs() < 1e-15
        );
        // Rectangle inside the disc.
        assert!((disc_rectangle_area(2.0, [0.1, 0.2], [0.0, 0.0], [0.5, 0.3]) - 0.15).abs() < 1e-15);
        // Disjoint.
        assert_eq!(disc_rectangle_area(0.5, [0.0, 0.0], [0.6, 0.0], [1.0, 1.0]), 0.0);
    }

    #[test]
    fn circular_segment_closed_form() {
        // Segment of height r − d: area r² acos(d/r) − d √(r² − d²) (elementary geometry).
        let (r, d): (f64, f64) = (1.3, 0.4);
        let exact = r * r * (d / r).acos() - d * (r * r - d * d).sqrt();
        let a = disc_rectangle_area(r, [0.0, 0.0], [d, -5.0], [5.0, 5.0]);
        assert!((a - exact).abs() < 1e-14, "{a} vs {exact}");
    }

    #[test]
    fn agrees_with_fine_strip_sum_on_generic_cuts() {
        let cases = [
            (1.0, [0.3, -0.2], [0.5, 0.1], [1.2, 0.9]),
            (0.8, [0.0, 0.0], [-0.3, 0.6], [0.7, 1.5]),
            (2.0, [1.1, 0.9], [0.0, 0.0], [1.0, 1.0]),
            (0.45, [0.5, 0.5], [0.0, 0.0], [1.0, 1.0]),
            (0.6, [0.5, 0.5], [0.0, 0.0], [1.0, 1.0]),
        ];
        for (r, c, lo, hi) in cases {
            let a = disc_rectangle_area(r, c, lo, hi);
            let b = brute_force(r, c, lo, hi, 400_000);
            assert!((a - b).abs() < 1e-9, "r={r} c={c:?}: {a} vs {b}");
        }
    }
}
