//! What a drawn figure shows, recorded while drawing so that what can be checked without eyes is checked by
//! tests: no NaN plotted, every finite value inside the axis ranges, non-finite values counted on the figure,
//! log axes where positive data span decades, the legend clear of the data, text-valued axes as categories.

use super::axes::{Axis, Scale, LOG_SPAN};
use super::legend::{covers, PixelBox};

#[derive(Clone, Debug, Default)]
pub struct FigureRecord {
    pub file: String,
    pub x: Option<Axis>,
    pub y: Option<Axis>,
    /// Every plotted data point in display units (x, y), before mapping to the axes.
    pub points: Vec<(f64, f64)>,
    /// Values that could not be drawn (infinite, missing, not positive on a log axis).
    pub not_drawn: usize,
    /// Text written on the figure (notes, legend entries).
    pub notes: Vec<String>,
    pub legend: Option<PixelBox>,
    /// Pixels covered by plotted data.
    pub occupied: Vec<(i32, i32)>,
    /// Category names of a text-valued x axis, in drawing order.
    pub categories: Option<Vec<String>>,
    /// The y values are positive data that might want a log axis (false for counts and fractions).
    pub y_positive_quantity: bool,
}

impl FigureRecord {
    /// The record with its axes, once the figure is drawn.
    pub fn with_axes(self, x: Axis, y: Axis) -> Self {
        FigureRecord { x: Some(x), y: Some(y), ..self }
    }

    /// Every eye-free rule of the house style; the first broken one as an error.
    pub fn check(&self) -> Result<(), String> {
        let name = &self.file;
        if let Some(p) = self.points.iter().find(|(x, y)| !x.is_finite() || !y.is_finite()) {
            return Err(format!("{name}: non-finite point {p:?} plotted"));
        }
        for (axis, pick) in [(&self.x, 0), (&self.y, 1)] {
            let Some(axis) = axis else { continue };
            if self.categories.is_some() && pick == 0 {
                continue;
            }
            if let Some(p) = self.points.iter().find(|p| !axis.contains(if pick == 0 { p.0 } else { p.1 })) {
                return Err(format!(
                    "{name}: point {p:?} outside the axis range {:?} ({})",
                    axis.range, axis.label
                ));
            }
            let mut seen = axis.tick_labels.clone();
            seen.sort();
            seen.dedup();
            if seen.len() != axis.tick_labels.len() {
                return Err(format!("{name}: repeated tick labels {:?}", axis.tick_labels));
            }
            if axis.tick_labels.iter().any(|l| l.chars().filter(char::is_ascii_digit).count() > 6) {
                return Err(format!("{name}: overlong tick labels {:?}", axis.tick_labels));
            }
        }
        if self.not_drawn > 0 && !self.notes.iter().any(|n| n.contains(&self.not_drawn.to_string())) {
            return Err(format!(
                "{name}: {} values not drawn and not stated ({:?})",
                self.not_drawn, self.notes
            ));
        }
        if let (Some(y), true) = (&self.y, self.y_positive_quantity) {
            let ys: Vec<f64> = self.points.iter().map(|p| p.1).filter(|v| *v > 0.0).collect();
            let (lo, hi) = ys.iter().fold((f64::INFINITY, 0.0_f64), |(a, b), &v| (a.min(v), b.max(v)));
            if ys.len() == self.points.len() && !ys.is_empty() && hi / lo > LOG_SPAN && y.scale != Scale::Log
            {
                return Err(format!("{name}: positive data over {:.0}× on a linear axis", hi / lo));
            }
        }
        if let Some(bx) = self.legend {
            if let Some(p) = self.occupied.iter().find(|p| covers(bx, **p, 0)) {
                return Err(format!("{name}: legend {bx:?} covers plotted pixel {p:?}"));
            }
        }
        if let Some(categories) = &self.categories {
            let mut seen = categories.clone();
            seen.sort();
            seen.dedup();
            if seen.len() != categories.len() {
                return Err(format!("{name}: repeated categories {categories:?}"));
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn good() -> FigureRecord {
        let x = Axis::fit(&[0.0, 10.0], Scale::Linear, false, "x (µm)");
        let y = Axis::fit(&[1.0, 2.0], Scale::Linear, false, "y (nM)");
        FigureRecord {
            file: "f.png".into(),
            x: Some(x),
            y: Some(y),
            points: vec![(0.0, 1.0), (10.0, 2.0)],
            legend: Some(((0, 0), (10, 10))),
            occupied: vec![(50, 50)],
            y_positive_quantity: true,
            ..Default::default()
        }
    }

    #[test]
    fn check_catches_each_broken_rule() {
        assert_eq!(good().check(), Ok(()));
        let mut r = good();
        r.points.push((1.0, f64::NAN));
        assert!(r.check().is_err());
        let mut r = good();
        r.points.push((100.0, 1.0));
        assert!(r.check().unwrap_err().contains("outside"));
        let mut r = good();
        r.not_drawn = 3;
        assert!(r.check().is_err());
        r.notes.push("3 cells with infinite error".into());
        assert!(r.check().is_ok());
        let mut r = good();
        r.occupied.push((5, 5));
        assert!(r.check().unwrap_err().contains("legend"));
        let mut r = good();
        r.points = vec![(0.0, 0.01), (10.0, 5.0)];
        r.y = Some(Axis::fit(&[0.01, 5.0], Scale::Linear, false, "y"));
        assert!(r.check().unwrap_err().contains("linear axis"));
        let mut r = good();
        r.categories = Some(vec!["a".into(), "a".into()]);
        assert!(r.check().is_err());
    }
}
