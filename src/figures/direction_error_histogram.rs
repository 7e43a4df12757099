//! Histogram of the per-cell direction error (log10 scale): left of the line at 1 a cell can tell front from
//! back within the integration time; right of it, it cannot.

use std::path::Path;

use plotters::prelude::*;

use super::run_data::RunFigureData;
use super::style::{drawing, register_fonts, write_png, FONT};

const BINS: usize = 30;

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<()> {
    register_fonts();
    let logs: Vec<f64> = data
        .cells
        .iter()
        .map(|c| c.direction_error)
        .filter(|e| e.is_finite() && *e > 0.0)
        .map(f64::log10)
        .collect();
    let without_contrast = data.cells.len() - logs.len();
    let (mut lo, mut hi) =
        logs.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| (a.min(v), b.max(v)));
    if !lo.is_finite() {
        (lo, hi) = (-1.0, 1.0);
    }
    // Always show the line at error = 1.
    let (lo, hi) = ((lo.min(0.0) - 0.1).floor(), (hi.max(0.0) + 0.1).ceil());
    let width = (hi - lo) / BINS as f64;
    let mut counts = [0usize; BINS];
    for v in &logs {
        counts[(((v - lo) / width) as usize).min(BINS - 1)] += 1;
    }
    let top = counts.iter().copied().max().unwrap_or(0).max(1) as f64 * 1.15;
    let below = logs.iter().filter(|&&v| v < 0.0).count();
    let time = data.integration_time.map_or(String::new(), |t| format!(" over {:.3} h", t / 3600.0));
    write_png(path, (1000, 600), |root| {
        drawing(root.fill(&WHITE))?;
        let mut chart = drawing(
            ChartBuilder::on(root)
                .caption(format!("Direction error per cell{time}"), (FONT, 20))
                .margin(14)
                .x_label_area_size(48)
                .y_label_area_size(60)
                .build_cartesian_2d(lo..hi, 0.0..top),
        )?;
        drawing(
            chart
                .configure_mesh()
                .light_line_style(RGBColor(235, 235, 235))
                .x_desc("log10 direction error (1)")
                .y_desc("cells")
                .x_label_formatter(&|v| format!("{v:.1}"))
                .y_label_formatter(&|v| format!("{v:.0}"))
                .label_style((FONT, 14))
                .axis_desc_style((FONT, 15))
                .draw(),
        )?;
        drawing(chart.draw_series(counts.iter().enumerate().map(|(b, &n)| {
            let x0 = lo + b as f64 * width;
            Rectangle::new([(x0, 0.0), (x0 + width, n as f64)], RGBColor(33, 145, 140).filled())
        })))?;
        drawing(chart.draw_series(std::iter::once(PathElement::new(
            vec![(0.0, 0.0), (0.0, top)],
            RGBColor(200, 30, 30).stroke_width(2),
        ))))?
        .label(format!("error = 1: {below} of {} cells below", data.cells.len()))
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], RGBColor(200, 30, 30).stroke_width(2)));
        if without_contrast > 0 {
            drawing(chart.draw_series(std::iter::once(PathElement::new(vec![(lo, 0.0), (lo, 0.0)], WHITE))))?
                .label(format!("{without_contrast} cells without contrast (infinite error) not shown"))
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], WHITE));
        }
        drawing(
            chart
                .configure_series_labels()
                .position(SeriesLabelPosition::UpperRight)
                .background_style(WHITE.mix(0.85))
                .border_style(RGBColor(160, 160, 160))
                .label_font((FONT, 14))
                .draw(),
        )?;
        Ok(())
    })
}
