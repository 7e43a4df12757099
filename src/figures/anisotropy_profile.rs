//! Anisotropy along the flow against downstream position: the measured value of every cell, the estimate from
//! the mean-field background (own cloud + background uptake + background gradient) over the span the cells
//! occupy (nearer the inlet than the first cell's centre it describes no cell, and its inlet value would only
//! stretch the axis), and the isolated-cell low-Péclet value.

use std::path::Path;

use plotters::prelude::*;

use super::run_data::RunFigureData;
use super::style::legend::along;
use super::style::{
    chart, choose_scale, colour_maps, drawing, place_legend, register_fonts, titled, write_png, Axis,
    FigureRecord, Legend, Swatch, INK,
};

/// Height of the plot area in pixels (for the legend's headroom).
const PLOT_HEIGHT: f64 = 500.0;

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<FigureRecord> {
    register_fonts();
    let um = 1e6;
    let lx = data.extent[0] * um;
    let measured: Vec<(f64, f64)> = data
        .cells
        .iter()
        .filter(|c| c.anisotropy_along_flow.is_finite() && c.centre[0].is_finite())
        .map(|c| (c.centre[0] * um, c.anisotropy_along_flow))
        .collect();
    let not_drawn = data.cells.len() - measured.len();
    let (first, last) =
        measured.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| (a.min(p.0), b.max(p.0)));
    let estimate: Vec<(f64, f64)> = data
        .meanfield_profile
        .iter()
        .map(|&(x, a)| (x * um, a))
        .filter(|&(x, a)| a.is_finite() && x >= first && x <= last)
        .collect();
    let mut values: Vec<f64> = measured.iter().chain(&estimate).map(|p| p.1).collect();
    values.extend(data.isolated_anisotropy);
    let scale = choose_scale(&values, false);
    let rows = 1
        + usize::from(!estimate.is_empty())
        + usize::from(data.isolated_anisotropy.is_some())
        + usize::from(not_drawn > 0);
    let y = Axis::fit(&values, scale, true, "anisotropy along the flow (dimensionless)")
        .with_headroom(Legend::room(rows), PLOT_HEIGHT);
    let x = Axis::between(0.0, lx, super::style::Scale::Linear, "x (µm), downstream");
    let mut record = FigureRecord { file: path.display().to_string(), not_drawn, ..Default::default() };
    let dots = colour_maps::series(0);
    let line = colour_maps::series(1);
    write_png(path, (1000, 640), |root| {
        let body = titled(root, "Anisotropy along the flow, inlet to outlet", None)?;
        let mut plot = chart(&body, &x, &y)?;
        let map = |(px, py): (f64, f64)| (x.map(px), y.map(py));
        drawing(plot.draw_series(measured.iter().map(|&p| Circle::new(map(p), 3, dots.mix(0.8).filled()))))?;
        let mut occupied: Vec<(i32, i32)> = measured.iter().map(|&p| plot.backend_coord(&map(p))).collect();
        let mut legend = Legend::default();
        legend.add(Swatch::Dot(dots), format!("measured, {} cells", measured.len()));
        if !estimate.is_empty() {
            let path_points: Vec<(f64, f64)> = estimate.iter().map(|&p| map(p)).collect();
            let pixels: Vec<(i32, i32)> = path_points.iter().map(|p| plot.backend_coord(p)).collect();
            occupied.extend(along(&pixels));
            drawing(plot.draw_series(std::iter::once(PathElement::new(path_points, line.stroke_width(3)))))?;
            legend.add(Swatch::Line(line), "mean-field estimate for a typical cell");
        }
        if let Some(a) = data.isolated_anisotropy {
            let level = y.map(a);
            let (x0, x1) = x.range;
            let dashes = 50;
            for d in (0..dashes).step_by(2) {
                let (a0, a1) = (
                    x0 + (x1 - x0) * d as f64 / dashes as f64,
                    x0 + (x1 - x0) * (d + 1) as f64 / dashes as f64,
                );
                drawing(plot.draw_series(std::iter::once(PathElement::new(
                    vec![(a0, level), (a1, level)],
                    INK.stroke_width(2),
                ))))?;
            }
            occupied.extend(along(&[plot.backend_coord(&(x0, level)), plot.backend_coord(&(x1, level))]));
            legend.add(Swatch::Dashed(INK), "isolated cell, first order in the Péclet number");
            record.points.push((0.0, a));
        }
        if not_drawn > 0 {
            legend.add(Swatch::Blank, format!("{not_drawn} cells without a finite anisotropy, not drawn"));
        }
        place_legend(root, &plot, &legend, occupied, &mut record)?;
        Ok(())
    })?;
    record.points.extend(measured);
    record.points.extend(estimate);
    Ok(record.with_axes(x, y))
}
