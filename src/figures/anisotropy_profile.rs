//! Anisotropy along the flow against downstream position: the measured value of every cell, the estimate
//! from the mean-field background (own cloud + background uptake + background gradient), and the isolated-cell
//! low-Péclet value.

use std::path::Path;

use plotters::prelude::*;

use super::run_data::RunFigureData;
use super::style::{drawing, register_fonts, significant, write_png, FONT};

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<()> {
    register_fonts();
    let um = 1e6;
    let lx = data.extent[0] * um;
    let measured: Vec<(f64, f64)> = data
        .cells
        .iter()
        .filter(|c| c.anisotropy_along_flow.is_finite())
        .map(|c| (c.centre[0] * um, c.anisotropy_along_flow))
        .collect();
    let mut values: Vec<f64> = measured.iter().map(|p| p.1).collect();
    values.extend(data.meanfield_profile.iter().map(|p| p.1).filter(|v| v.is_finite()));
    values.extend(data.isolated_anisotropy);
    values.sort_by(f64::total_cmp);
    let pick =
        |q: f64| values.get(((values.len() as f64 - 1.0) * q).round() as usize).copied().unwrap_or(0.0);
    // Robust range: 1st to 99th percentile, always including 0.
    let (lo, hi) = (pick(0.01).min(0.0), pick(0.99).max(0.0));
    let pad = 0.08 * (hi - lo).max(1e-12);
    let (lo, hi) = (lo - pad, hi + pad);
    write_png(path, (1000, 620), |root| {
        drawing(root.fill(&WHITE))?;
        let mut chart = drawing(
            ChartBuilder::on(root)
                .caption("Anisotropy along the flow against downstream position", (FONT, 20))
                .margin(14)
                .x_label_area_size(48)
                .y_label_area_size(78)
                .build_cartesian_2d(0.0..lx, lo..hi),
        )?;
        drawing(
            chart
                .configure_mesh()
                .light_line_style(RGBColor(235, 235, 235))
                .x_desc("x (µm), downstream")
                .y_desc("anisotropy along flow (1)")
                .y_label_formatter(&|v| significant(*v, 3))
                .label_style((FONT, 14))
                .axis_desc_style((FONT, 15))
                .draw(),
        )?;
        let clipped = |v: f64| v.clamp(lo, hi);
        drawing(
            chart.draw_series(
                measured.iter().map(|&(x, a)| {
                    Circle::new((x, clipped(a)), 3, RGBColor(49, 104, 142).mix(0.75).filled())
                }),
            ),
        )?
        .label("measured (per cell)")
        .legend(|(x, y)| Circle::new((x + 10, y), 4, RGBColor(49, 104, 142).filled()));
        if !data.meanfield_profile.is_empty() {
            let line: Vec<(f64, f64)> =
                data.meanfield_profile.iter().map(|&(x, a)| (x * um, clipped(a))).collect();
            drawing(
                chart.draw_series(std::iter::once(PathElement::new(
                    line,
                    RGBColor(230, 97, 1).stroke_width(3),
                ))),
            )?
            .label("mean-field estimate (typical cell)")
            .legend(|(x, y)| {
                PathElement::new(vec![(x, y), (x + 20, y)], RGBColor(230, 97, 1).stroke_width(3))
            });
        }
        if let Some(a) = data.isolated_anisotropy {
            let dashes: Vec<PathElement<(f64, f64)>> = (0..40)
                .filter(|s| s % 2 == 0)
                .map(|s| {
                    PathElement::new(
                        vec![(lx * s as f64 / 40.0, clipped(a)), (lx * (s + 1) as f64 / 40.0, clipped(a))],
                        BLACK.stroke_width(2),
                    )
                })
                .collect();
            drawing(chart.draw_series(dashes))?
                .label("isolated cell, first order in Pe")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 8, y)], BLACK.stroke_width(2)));
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
