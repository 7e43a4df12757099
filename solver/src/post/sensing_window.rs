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

/// Since when each cell's window direction error has stayed at or below the readable level: the last
/// downward crossing, `None` while the error is above it (or before the window counts anything). At the end
/// of a run this is the time to a readable cue.
///
/// A crossing inside a step is interpolated linearly in `g = 1/error²` rather than in the error: at constant
/// rates `g = N·Â²/(1 − Â²)` grows in proportion to the counts N, i.e. linearly in time, while the error itself
/// starts at +∞ when the window opens.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ReadableSince {
    pub since: Vec<Option<f64>>,
}

impl ReadableSince {
    pub fn new(cells: usize) -> Self {
        ReadableSince { since: vec![None; cells] }
    }

    /// Records the step `t0 → t1` with the per-cell window errors at its two ends.
    pub fn update(&mut self, t0: f64, t1: f64, before: &[f64], after: &[f64], readable_error: f64) {
        let g = |e: f64| if e.is_nan() || e == f64::INFINITY { 0.0 } else { 1.0 / (e * e) };
        let level = g(readable_error);
        for (i, slot) in self.since.iter_mut().enumerate() {
            let readable = after[i] <= readable_error;
            match (*slot, readable) {
                (Some(_), true) => {}
                (_, false) => *slot = None,
                (None, true) => {
                    let (g0, g1) = (g(before[i]), g(after[i]));
                    let s = if g0 >= level || g1 <= g0 {
                        0.0
                    } else {
                        ((level - g0) / (g1 - g0)).clamp(0.0, 1.0)
                    };
                    *slot = Some(t0 + s * (t1 - t0));
                }
            }
        }
    }

    /// Per cell: the time to a readable cue, NaN when the error is above the level at the end.
    pub fn times(&self) -> Vec<f64> {
        self.since.iter().map(|s| s.unwrap_or(f64::NAN)).collect()
    }
}

/// True when a cell, not yet readable, will be by `end` if its rates `[bound, front, back]` stay as they are:
/// the window still counts towards its time to a readable cue. `from` is when the counts grow from (the later
/// of now and the window start).
pub fn becomes_readable_by(
    counts: (f64, f64),
    rates: &[f64; 3],
    from: f64,
    end: f64,
    readable_error: f64,
) -> bool {
    let span = (end - from).max(0.0);
    let (_, error) = front_back_contrast(counts.0 + rates[1] * span, counts.1 + rates[2] * span);
    error <= readable_error
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

    /// At constant rates 1/error² grows linearly in time, so a crossing inside one long step is found where
    /// the closed form puts it; a later rise above the level clears it, and a cell never readable stays NaN.
    #[test]
    fn readable_time_is_interpolated_in_inverse_square_error() {
        // Rates front 0.55, back 0.45 per s: Â = 0.1, error(T) = √((1 − 0.01)/T)/0.1 = 1 at T = 99 s.
        let error = |t: f64| front_back_contrast(0.55 * t, 0.45 * t).1;
        let mut r = ReadableSince::new(2);
        r.update(0.0, 60.0, &[f64::INFINITY, f64::INFINITY], &[error(60.0), f64::INFINITY], 1.0);
        assert!(r.since[0].is_none());
        r.update(60.0, 150.0, &[error(60.0), f64::INFINITY], &[error(150.0), f64::INFINITY], 1.0);
        assert!((r.since[0].unwrap() - 99.0).abs() < 1e-9, "{:?}", r.since[0]);
        assert!(r.times()[1].is_nan());
        r.update(150.0, 160.0, &[error(150.0), 1.0], &[1.5, 0.5], 1.0);
        assert!(r.since[0].is_none() && r.since[1].is_some());
        // The same cell seen from 60 s: its counts reach the level by 150 s at these rates, not by 90 s.
        let counts = (0.55 * 60.0, 0.45 * 60.0);
        assert!(becomes_readable_by(counts, &[1.0, 0.55, 0.45], 60.0, 150.0, 1.0));
        assert!(!becomes_readable_by(counts, &[1.0, 0.55, 0.45], 60.0, 90.0, 1.0));
    }
}
