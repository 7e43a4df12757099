//! Per-cell anisotropy arrows over the layout (seen from above, x–y): each cell's outline and an arrow of the
//! in-plane part of its anisotropy vector, scaled so the 75th-percentile magnitude spans 1.5 radii and clipped at
//! 3 radii (crowded inlets would otherwise cover the picture); a scale key gives the reference magnitude.

use std::path::Path;

use plotters::prelude::*;

use super::concentration_slice::arrow;
use super::run_data::RunFigureData;
use super::style::{drawing, register_fonts, significant, write_png, FONT};

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<()> {
    register_fonts();
    let um = 1e6;
    let (lx, ly) = (data.extent[0] * um, data.extent[1] * um);
    let plot_w = 900.0;
    let plot_h = (plot_w * ly / lx).clamp(160.0, 900.0);
    let (width, height) = (plot_w as u32 + 90, plot_h as u32 + 130);
    let mut magnitudes: Vec<f64> =
        data.cells.iter().map(|c| c.anisotropy[0].hypot(c.anisotropy[1])).filter(|m| m.is_finite()).collect();
    magnitudes.sort_by(f64::total_cmp);
    let reference = magnitudes.get((magnitudes.len() * 3) / 4).copied().unwrap_or(0.0);
    let radius = data.cells.first().map_or(1e-5, |c| c.radius) * um;
    let scale = if reference > 0.0 { 1.5 * radius / reference } else { 0.0 };
    write_png(path, (width, height), |root| {
        drawing(root.fill(&WHITE))?;
        let mut chart = drawing(
            ChartBuilder::on(root)
                .caption("Anisotropy of the sensed flux per cell (x–y projection)", (FONT, 20))
                .margin(12)
                .x_label_area_size(45)
                .margin_bottom(40)
                .y_label_area_size(60)
                .build_cartesian_2d(0.0..lx, 0.0..ly),
        )?;
        drawing(
            chart
                .configure_mesh()
                .disable_mesh()
                .x_desc("x (µm), flow along +x")
                .y_desc("y (µm)")
                .label_style((FONT, 14))
                .axis_desc_style((FONT, 15))
                .draw(),
        )?;
        for cell in &data.cells {
            let (cx, cy, r) = (cell.centre[0] * um, cell.centre[1] * um, cell.radius * um);
            let outline: Vec<(f64, f64)> = (0..=40)
                .map(|s| {
                    let t = s as f64 / 40.0 * std::f64::consts::TAU;
                    (cx + r * t.cos(), cy + r * t.sin())
                })
                .collect();
            drawing(chart.draw_series(std::iter::once(PathElement::new(
                outline,
                RGBColor(170, 170, 170).stroke_width(1),
            ))))?;
            let (mut ax, mut ay) = (cell.anisotropy[0] * scale, cell.anisotropy[1] * scale);
            let length = ax.hypot(ay);
            if length > 3.0 * r {
                (ax, ay) = (ax * 3.0 * r / length, ay * 3.0 * r / length);
            }
            if scale > 0.0 && ax.is_finite() && ay.is_finite() && ax.hypot(ay) > 0.05 * r {
                let colour = if cell.anisotropy_along_flow >= 0.0 {
                    RGBColor(33, 102, 172)
                } else {
                    RGBColor(178, 24, 43)
                };
                for seg in arrow((cx, cy), (cx + ax, cy + ay), 0.3) {
                    drawing(
                        chart.draw_series(std::iter::once(PathElement::new(seg, colour.stroke_width(2)))),
                    )?;
                }
            }
        }
        let key = if reference > 0.0 {
            format!(
                "arrow of 1.5 radii: |A| = {} (75th percentile), clipped at 3 radii; blue: richer downstream, red: upstream",
                significant(reference, 3)
            )
        } else {
            "no anisotropy to show".to_string()
        };
        drawing(root.draw(&Text::new(key, (70, height as i32 - 28), (FONT, 14).into_font())))?;
        Ok(())
    })
}
