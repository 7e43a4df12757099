//! What each cell has counted since the sensing window opened: cumulative bound molecules and the expected
//! front/back counts, integrated in time by the trapezoid rule over the accepted steps (second order, like the
//! steps themselves), and the direction error computed from those cumulative counts.
//!
//! The sensed (counting) rate of a cell is the one [`crate::post::integrate_surface`] uses: the bound rate
//! (first-order uptake), the arriving flux (absorbing: bound minus the cell's own recaptured release), or the
//! Smoluchowski-equivalent `(D/a)·c̄·A` of a reflecting cell. It is split front/back as `(1 ± m)/2` with
//! `m = clamp(1.5 · anisotropy along the local flow, −1, 1)`, the first angular moment used there.

use crate::post::counting_noise::front_back_contrast;
use crate::post::CellSensing;
use crate::problem::SurfaceUptake;

/// Per-cell rates at one time: `[bound, front, back]` (molecules/s), and the sensed rate front + back.
pub fn cell_rates(
    sensing: &[CellSensing],
    uptake: SurfaceUptake,
    diffusivity: f64,
    radius: &[f64],
    area: &[f64],
    released: &[f64],
) -> Vec<[f64; 3]> {
    sensing
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let counted = match uptake {
                SurfaceUptake::None => diffusivity / radius[i] * s.mean_surface_concentration * area[i],
                SurfaceUptake::FirstOrder { .. } => s.bound_rate,
                SurfaceUptake::Absorbing => s.bound_rate - released[i],
            };
            let m = (1.5 * s.anisotropy_along_flow).clamp(-1.0, 1.0);
            [s.bound_rate, 0.5 * counted * (1.0 + m), 0.5 * counted * (1.0 - m)]
        })
        .collect()
}

/// Cumulative counts per cell since the window opened.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct WindowCounts {
    /// Molecules bound (molecules).
    pub bound: Vec<f64>,
    /// Expected counts on the downstream (front) and upstream (back) hemispheres (molecules).
    pub front: Vec<f64>,
    pub back: Vec<f64>,
}

impl WindowCounts {
    pub fn new(cells: usize) -> Self {
        WindowCounts { bound: vec![0.0; cells], front: vec![0.0; cells], back: vec![0.0; cells] }
    }

    /// Adds the trapezoid integral of the rates over one step of length `dt`.
    pub fn add_step(&mut self, before: &[[f64; 3]], after: &[[f64; 3]], dt: f64) {
        for (i, (b, a)) in before.iter().zip(after).enumerate() {
            self.bound[i] += 0.5 * dt * (b[0] + a[0]);
            self.front[i] += 0.5 * dt * (b[1] + a[1]);
            self.back[i] += 0.5 * dt * (b[2] + a[2]);
        }
    }

    /// Front–back contrast and its counting error from the cumulative counts, per cell.
    pub fn contrast_and_error(&self) -> Vec<(f64, f64)> {
        self.front.iter().zip(&self.back).map(|(&f, &b)| front_back_contrast(f, b)).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A linearly rising rate is integrated exactly by the trapezoid rule.
    #[test]
    fn trapezoid_of_linear_rates_is_exact() {
        let mut w = WindowCounts::new(1);
        let rate = |t: f64| [2.0 * t, 3.0 * t, t];
        let times = [0.0, 0.3, 0.5, 1.2];
        for pair in times.windows(2) {
            w.add_step(&[rate(pair[0])], &[rate(pair[1])], pair[1] - pair[0]);
        }
        let t2 = 1.2f64 * 1.2;
        assert!((w.bound[0] - t2).abs() < 1e-14 && (w.front[0] - 1.5 * t2).abs() < 1e-14);
        let (contrast, _) = w.contrast_and_error()[0];
        assert!((contrast - 0.5).abs() < 1e-14);
    }
}
