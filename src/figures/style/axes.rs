//! Axes: the scale chosen from the data (log for positive data over more than two decades or a log sweep axis;
//! symmetric-log for signed data whose largest magnitude dwarfs the typical one; otherwise linear), a range
//! that holds every finite value, and tick labels that all differ. Values are drawn in plot coordinates
//! (`Axis::map`: log10 on a log axis), so every chart is a plain f64 chart with our own key points.

use std::ops::Range;

use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint, Ranged};

use super::numbers::{linear_ticks, log_ticks, tick_labels};

/// How values map to the axis.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Scale {
    Linear,
    Log,
    /// asinh(v / threshold): linear within ±threshold, logarithmic beyond.
    SymLog {
        threshold: f64,
    },
}

/// Positive data over more than this ratio get a log axis.
pub const LOG_SPAN: f64 = 100.0;

/// The scale for `values` (display units; non-finite ones ignored). `log_hint`: the quantity is swept on a log
/// scale, so a log axis is used whenever the values are positive.
pub fn choose_scale(values: &[f64], log_hint: bool) -> Scale {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    let Some(lo) = finite.iter().copied().reduce(f64::min) else { return Scale::Linear };
    let hi = finite.iter().copied().fold(lo, f64::max);
    if lo > 0.0 {
        return if log_hint || hi / lo > LOG_SPAN { Scale::Log } else { Scale::Linear };
    }
    if lo < 0.0 && hi > 0.0 {
        let mut magnitudes: Vec<f64> = finite.iter().map(|v| v.abs()).filter(|v| *v > 0.0).collect();
        magnitudes.sort_by(f64::total_cmp);
        let typical = magnitudes[magnitudes.len() / 2];
        let largest = magnitudes[magnitudes.len() - 1];
        if largest > 1e3 * typical {
            return Scale::SymLog { threshold: typical };
        }
    }
    Scale::Linear
}

/// One axis of a figure.
#[derive(Clone, Debug)]
pub struct Axis {
    pub scale: Scale,
    /// Label text with unit and, for a non-linear scale, the scale named.
    pub label: String,
    /// Plot-coordinate range.
    pub range: (f64, f64),
    /// Ticks in plot coordinates and their labels (values in display units).
    pub ticks: Vec<f64>,
    pub tick_labels: Vec<String>,
}

impl Axis {
    /// An axis holding every finite value of `values` (display units), padded by 4 %; `include_zero` keeps 0 in
    /// a linear range. `label` carries the unit (see `units::axis_label`).
    pub fn fit(values: &[f64], scale: Scale, include_zero: bool, label: &str) -> Axis {
        let finite = values.iter().copied().filter(|v| v.is_finite() && (scale != Scale::Log || *v > 0.0));
        let (mut lo, mut hi) =
            finite.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| (a.min(v), b.max(v)));
        if !lo.is_finite() {
            (lo, hi) = if scale == Scale::Log { (1.0, 10.0) } else { (0.0, 1.0) };
        }
        if include_zero && scale != Scale::Log {
            (lo, hi) = (lo.min(0.0), hi.max(0.0));
        }
        Axis::between(lo, hi, scale, label)
    }

    /// An axis from `lo` to `hi` (display units), padded by 4 %.
    pub fn between(lo: f64, hi: f64, scale: Scale, label: &str) -> Axis {
        let probe =
            Axis { scale, label: String::new(), range: (0.0, 1.0), ticks: vec![], tick_labels: vec![] };
        let (mut a, mut b) = (probe.map(lo), probe.map(hi));
        if b <= a {
            let half = if a == 0.0 { 0.5 } else { 0.1 * a.abs() };
            (a, b) = (a - half, b + half);
        }
        let pad = 0.04 * (b - a);
        let range = (a - pad, b + pad);
        let values: Vec<f64> = match scale {
            Scale::Linear => linear_ticks(range.0, range.1, 6),
            Scale::Log => log_ticks(10f64.powf(range.0), 10f64.powf(range.1)),
            Scale::SymLog { threshold } => {
                let top = probe.unmap(range.1).max(-probe.unmap(range.0));
                let mut t = vec![0.0];
                let mut m = threshold;
                let decade = 10f64.powf(threshold.log10().ceil());
                if decade > threshold {
                    m = decade;
                }
                while m <= top {
                    t.extend([m, -m]);
                    m *= 10.0;
                }
                t.retain(|v| probe.map(*v) >= range.0 && probe.map(*v) <= range.1);
                t.sort_by(f64::total_cmp);
                t
            }
        };
        let label = match scale {
            Scale::Linear => label.to_string(),
            Scale::Log => format!("{label}, log axis"),
            Scale::SymLog { threshold } => {
                format!(
                    "{label}, symmetric log axis (linear within ±{})",
                    super::numbers::significant(threshold, 2)
                )
            }
        };
        let tick_labels = tick_labels(&values);
        let ticks = values.iter().map(|&v| probe.map(v)).collect();
        Axis { scale, label, range, ticks, tick_labels }
    }

    /// The same axis grown at the top so that `pixels` of an axis `height` pixels long stay free above the data
    /// (room for a legend that must not cover data).
    pub fn with_headroom(&self, pixels: f64, height: f64) -> Axis {
        let (lo, hi) = self.range;
        let grown = hi + (hi - lo) * pixels / (height - pixels).max(1.0);
        let label = self.label.clone();
        let mut axis = Axis::between(self.unmap(lo), self.unmap(grown), self.scale, "");
        axis.label = label;
        axis.range.0 = lo;
        let keep: Vec<bool> = axis.ticks.iter().map(|t| *t >= lo).collect();
        let mut k = keep.iter();
        axis.ticks.retain(|_| *k.next().unwrap_or(&false));
        let mut k = keep.iter();
        axis.tick_labels.retain(|_| *k.next().unwrap_or(&false));
        axis
    }

    /// Plot coordinate of a value (display units); NaN for a value a log axis cannot show.
    pub fn map(&self, v: f64) -> f64 {
        match self.scale {
            Scale::Linear => v,
            Scale::Log if v > 0.0 => v.log10(),
            Scale::Log => f64::NAN,
            Scale::SymLog { threshold } => (v / threshold).asinh(),
        }
    }

    /// Value (display units) at a plot coordinate.
    pub fn unmap(&self, p: f64) -> f64 {
        match self.scale {
            Scale::Linear => p,
            Scale::Log => 10f64.powf(p),
            Scale::SymLog { threshold } => threshold * p.sinh(),
        }
    }

    /// Whether the value lies inside the drawn range.
    pub fn contains(&self, v: f64) -> bool {
        let p = self.map(v);
        p >= self.range.0 && p <= self.range.1
    }

    /// The plotters coordinate: our range with our ticks as its only key points.
    pub fn coord(&self) -> Ticked {
        Ticked { lo: self.range.0, hi: self.range.1, ticks: self.ticks.clone() }
    }

    /// The label of the tick at plot coordinate `p` (the formatter plotters calls).
    pub fn tick_text(&self, p: f64) -> String {
        self.ticks
            .iter()
            .zip(&self.tick_labels)
            .min_by(|a, b| (a.0 - p).abs().total_cmp(&(b.0 - p).abs()))
            .map(|(_, l)| l.clone())
            .unwrap_or_default()
    }
}

/// A linear plot coordinate whose grid lines and labels are exactly our ticks.
#[derive(Clone, Debug)]
pub struct Ticked {
    lo: f64,
    hi: f64,
    ticks: Vec<f64>,
}

impl Ranged for Ticked {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;

    fn map(&self, v: &f64, limit: (i32, i32)) -> i32 {
        let t = ((v - self.lo) / (self.hi - self.lo)).clamp(-1e3, 1e3);
        limit.0 + (t * (limit.1 - limit.0) as f64 + 1e-3).floor() as i32
    }

    fn key_points<Hint: KeyPointHint>(&self, hint: Hint) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            Vec::new()
        } else {
            self.ticks.clone()
        }
    }

    fn range(&self) -> Range<f64> {
        self.lo..self.hi
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scale_follows_the_data() {
        assert_eq!(choose_scale(&[1.0, 2.0, 50.0], false), Scale::Linear);
        assert_eq!(choose_scale(&[0.01, 2.0, 50.0], false), Scale::Log);
        assert_eq!(choose_scale(&[1.0, 2.0], true), Scale::Log);
        assert_eq!(choose_scale(&[-1.0, 2.0, f64::INFINITY], false), Scale::Linear);
        assert!(matches!(choose_scale(&[-0.1, 0.2, 0.1, 600.0, -0.3], false), Scale::SymLog { .. }));
        assert_eq!(choose_scale(&[0.0, 5.0, 500.0], false), Scale::Linear);
    }

    #[test]
    fn range_holds_every_finite_value() {
        let values = [0.003, 0.2, 115.0, f64::INFINITY, f64::NAN];
        let axis = Axis::fit(&values, choose_scale(&values, false), false, "error");
        assert_eq!(axis.scale, Scale::Log);
        assert!(values.iter().filter(|v| v.is_finite()).all(|&v| axis.contains(v)));
        assert!(axis.label.ends_with("log axis"));
        let labels = &axis.tick_labels;
        assert_eq!(labels, &["0.01", "0.1", "1", "10", "100"]);
    }
}
