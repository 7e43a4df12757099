//! The house legend: a paper-coloured box with an ink bar down its left edge, placed in the first corner of the
//! plot that holds no plotted point (computed from the pixels the data occupy), else in a strip the figure
//! keeps free for it.

use plotters::prelude::*;

use super::{drawing, Figure, FONT, INK, PAPER, RULE};

/// A box in pixels: (left, top), (right, bottom).
pub type PixelBox = ((i32, i32), (i32, i32));

/// The mark beside a legend entry.
#[derive(Clone, Copy, Debug)]
pub enum Swatch {
    Line(RGBColor),
    Dashed(RGBColor),
    Dot(RGBColor),
    Band(RGBColor),
    /// Text only (a count, a note).
    Blank,
}

const ROW: i32 = 19;
const PAD: i32 = 7;
const SWATCH: i32 = 24;
pub const LEGEND_FONT: u32 = 14;

#[derive(Clone, Debug, Default)]
pub struct Legend {
    pub entries: Vec<(Swatch, String)>,
}

impl Legend {
    pub fn add(&mut self, swatch: Swatch, text: impl Into<String>) {
        self.entries.push((swatch, text.into()));
    }

    /// Height in pixels of a legend of `rows` entries, with its inset from the plot edge.
    pub fn room(rows: usize) -> f64 {
        (2 * PAD + ROW * rows as i32 + 12) as f64
    }

    /// Width and height in pixels.
    pub fn size(&self, area: &Figure) -> (i32, i32) {
        let font = TextStyle::from((FONT, LEGEND_FONT).into_font());
        let text = self
            .entries
            .iter()
            .map(|(_, t)| area.estimate_text_size(t, &font).map_or(8 * t.len() as i32, |s| s.0 as i32))
            .max()
            .unwrap_or(0);
        (2 * PAD + SWATCH + 8 + text + 4, 2 * PAD + ROW * self.entries.len() as i32)
    }

    /// The first corner of `plot` (upper right, upper left, lower right, lower left, then top and bottom
    /// centre) where a box of `size` covers none of `occupied`; `None` when every place is taken.
    pub fn place(size: (i32, i32), plot: PixelBox, occupied: &[(i32, i32)]) -> Option<PixelBox> {
        let inset = 8;
        let ((l, t), (r, b)) = plot;
        let (w, h) = size;
        let centre = (l + r - w) / 2;
        let corners = [
            (r - inset - w, t + inset),
            (l + inset, t + inset),
            (r - inset - w, b - inset - h),
            (l + inset, b - inset - h),
            (centre, t + inset),
            (centre, b - inset - h),
        ];
        corners.into_iter().map(|(x, y)| ((x, y), (x + w, y + h))).find(|&bx| {
            bx.0 .0 >= l
                && bx.1 .0 <= r
                && bx.0 .1 >= t
                && bx.1 .1 <= b
                && !occupied.iter().any(|p| covers(bx, *p, 3))
        })
    }

    /// Draws the legend with its top-left corner at `at.0`.
    pub fn draw(&self, area: &Figure, at: PixelBox) -> anyhow::Result<()> {
        let ((x0, y0), (x1, y1)) = at;
        drawing(area.draw(&Rectangle::new([(x0, y0), (x1, y1)], PAPER.filled())))?;
        drawing(area.draw(&Rectangle::new([(x0, y0), (x1, y1)], RULE.stroke_width(1))))?;
        drawing(area.draw(&Rectangle::new([(x0, y0), (x0 + 3, y1)], INK.filled())))?;
        for (k, (swatch, text)) in self.entries.iter().enumerate() {
            let y = y0 + PAD + ROW * k as i32 + ROW / 2;
            let (sx, ex) = (x0 + PAD + 2, x0 + PAD + 2 + SWATCH);
            match *swatch {
                Swatch::Line(c) => {
                    drawing(area.draw(&PathElement::new(vec![(sx, y), (ex, y)], c.stroke_width(3))))?
                }
                Swatch::Dashed(c) => {
                    for d in 0..3 {
                        let a = sx + d * 9;
                        drawing(area.draw(&PathElement::new(vec![(a, y), (a + 5, y)], c.stroke_width(2))))?;
                    }
                }
                Swatch::Dot(c) => drawing(area.draw(&Circle::new(((sx + ex) / 2, y), 4, c.filled())))?,
                Swatch::Band(c) => {
                    drawing(area.draw(&Rectangle::new([(sx, y - 6), (ex, y + 6)], c.mix(0.3).filled())))?;
                    drawing(area.draw(&PathElement::new(vec![(sx, y), (ex, y)], c.stroke_width(2))))?;
                }
                Swatch::Blank => {}
            }
            let style = TextStyle::from((FONT, LEGEND_FONT).into_font()).color(&INK).pos(
                plotters::style::text_anchor::Pos::new(
                    plotters::style::text_anchor::HPos::Left,
                    plotters::style::text_anchor::VPos::Center,
                ),
            );
            drawing(area.draw(&Text::new(text.clone(), (ex + 8, y), style)))?;
        }
        Ok(())
    }
}

/// Whether `bx`, grown by `margin` pixels, covers `p`.
pub fn covers(bx: PixelBox, p: (i32, i32), margin: i32) -> bool {
    p.0 >= bx.0 .0 - margin && p.0 <= bx.1 .0 + margin && p.1 >= bx.0 .1 - margin && p.1 <= bx.1 .1 + margin
}

/// The pixels along a polyline, every few pixels, so a legend is never placed across a drawn line.
pub fn along(line: &[(i32, i32)]) -> Vec<(i32, i32)> {
    let mut out = Vec::new();
    for w in line.windows(2) {
        let (a, b) = (w[0], w[1]);
        let n = ((b.0 - a.0).abs().max((b.1 - a.1).abs()) / 3).max(1);
        out.extend((0..n).map(|k| (a.0 + (b.0 - a.0) * k / n, a.1 + (b.1 - a.1) * k / n)));
    }
    out.extend(line.last());
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn placement_avoids_points() {
        let plot = ((0, 0), (400, 300));
        let size = (100, 50);
        assert_eq!(Legend::place(size, plot, &[]), Some(((292, 8), (392, 58))));
        // A point in the upper-right corner sends the legend to the upper left.
        assert_eq!(Legend::place(size, plot, &[(350, 30)]), Some(((8, 8), (108, 58))));
        // Points everywhere: no place.
        let everywhere: Vec<(i32, i32)> =
            (0..40).flat_map(|i| (0..30).map(move |j| (i * 10, j * 10))).collect();
        assert_eq!(Legend::place(size, plot, &everywhere), None);
        assert_eq!(along(&[(0, 0), (9, 0)]), [(0, 0), (3, 0), (6, 0), (9, 0)]);
    }
}
