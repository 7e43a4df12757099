//! The chamber box that holds a layout, and the minimum-image separation along periodic axes.

/// Axis-aligned chamber `[lower, upper]` (m); `periodic[a]` pairs the two faces normal to axis a.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ChamberBox {
    pub lower: [f64; 3],
    pub upper: [f64; 3],
    pub periodic: [bool; 3],
}

impl ChamberBox {
    /// Edge lengths (m).
    pub fn extent(&self) -> [f64; 3] {
        [0, 1, 2].map(|a| self.upper[a] - self.lower[a])
    }

    /// Volume (m³).
    pub fn volume(&self) -> f64 {
        self.extent().iter().product()
    }

    /// Separation vector `q − p`, wrapped to the nearest periodic image along periodic axes. Per axis the
    /// nearest image is the one with |Δ| ≤ L/2, so this is the shortest distance over all images.
    pub fn separation(&self, p: [f64; 3], q: [f64; 3]) -> [f64; 3] {
        let extent = self.extent();
        [0, 1, 2].map(|a| {
            let d = q[a] - p[a];
            if self.periodic[a] {
                d - extent[a] * (d / extent[a]).round()
            } else {
                d
            }
        })
    }

    /// Centre distance between p and q over all periodic images (m).
    pub fn distance(&self, p: [f64; 3], q: [f64; 3]) -> f64 {
        self.separation(p, q).iter().map(|d| d * d).sum::<f64>().sqrt()
    }

    /// Name of the face at `side` (0 = min, 1 = max) of axis `a`, as in the case file ("x_min", ...).
    pub fn face_name(a: usize, side: usize) -> &'static str {
        const NAMES: [[&str; 2]; 3] = [["x_min", "x_max"], ["y_min", "y_max"], ["z_min", "z_max"]];
        NAMES[a][side]
    }

    /// Whether the box has finite corners with `upper > lower` on every axis.
    pub fn is_well_formed(&self) -> bool {
        (0..3)
            .all(|a| self.lower[a].is_finite() && self.upper[a].is_finite() && self.upper[a] > self.lower[a])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn periodic_separation_takes_the_nearest_image() {
        let chamber =
            ChamberBox { lower: [0.0; 3], upper: [10.0, 10.0, 10.0], periodic: [true, false, false] };
        let d = chamber.separation([0.5, 1.0, 1.0], [9.5, 1.0, 1.0]);
        assert!((d[0] + 1.0).abs() < 1e-12);
        let d = chamber.separation([1.0, 0.5, 1.0], [1.0, 9.5, 1.0]);
        assert!((d[1] - 9.0).abs() < 1e-12);
    }
}
