//! Mid-plane concentration slice: the ligand field in the horizontal plane through the middle of the chamber,
//! viridis-coloured with a colour bar in molecules/m³, the outlines of the cells that the plane cuts, and
//! arrows of the in-plane superficial velocity.

use std::path::Path;

use plotters::prelude::*;

use super::run_data::{MidPlane, RunFigureData};
use super::style::{colour_maps, drawing, register_fonts, significant, write_png, FONT};

/// Arrows across the chamber length.
const ARROWS_ALONG_X: usize = 16;

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<()> {
    let Some(plane) = &data.plane else { return Ok(()) };
    register_fonts();
    let um = 1e6;
    let (lx, ly) = (plane.nx as f64 * plane.spacing * um, plane.ny as f64 * plane.spacing * um);
    // Keep 1:1 aspect in the plot area: width fixed, height from the chamber's aspect ratio.
    let plot_w = 900.0;
    let plot_h = (plot_w * ly / lx).clamp(160.0, 900.0);
    let (width, height) = (plot_w as u32 + 230, plot_h as u32 + 110);
    let finite: Vec<f64> = plane.concentration.iter().copied().filter(|c| c.is_finite()).collect();
    let lo = finite.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = finite.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let (lo, hi) = if lo < hi { (lo, hi) } else { (lo, lo + 1.0) };
    write_png(path, (width, height), |root| {
        drawing(root.fill(&WHITE))?;
        let (main, bar) = root.split_horizontally(width - 150);
        let mut chart = drawing(
            ChartBuilder::on(&main)
                .caption(format!("Ligand concentration, mid-plane z = {:.0} µm", plane.z * um), (FONT, 20))
                .margin(12)
                .x_label_area_size(45)
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
        let h = plane.spacing * um;
        drawing(chart.draw_series((0..plane.ny).flat_map(|j| (0..plane.nx).map(move |i| (i, j))).map(
            |(i, j)| {
                let c = plane.concentration[i + plane.nx * j];
                let colour = if c.is_finite() {
                    colour_maps::field((c - lo) / (hi - lo))
                } else {
                    RGBColor(200, 200, 200)
                };
                let (x0, y0) = (i as f64 * h, j as f64 * h);
                Rectangle::new([(x0, y0), (x0 + h, y0 + h)], colour.filled())
            },
        )))?;
        // Outlines of the cells the plane cuts: circles of radius √(a² − Δz²).
        for cell in &data.cells {
            let dz = cell.centre[2] - plane.z;
            if dz.abs() >= cell.radius {
                continue;
            }
            let r = (cell.radius * cell.radius - dz * dz).sqrt() * um;
            let (cx, cy) = (cell.centre[0] * um, cell.centre[1] * um);
            let outline: Vec<(f64, f64)> = (0..=48)
                .map(|s| {
                    let t = s as f64 / 48.0 * std::f64::consts::TAU;
                    (cx + r * t.cos(), cy + r * t.sin())
                })
                .collect();
            drawing(chart.draw_series(std::iter::once(PathElement::new(outline, WHITE.stroke_width(2)))))?;
        }
        if let Some(arrows) = flow_arrows(plane, lx, ly) {
            for (from, to) in arrows {
                drawing(chart.draw_series(
                    arrow(from, to, 0.35).into_iter().map(|seg| PathElement::new(seg, BLACK.stroke_width(2))),
                ))?;
            }
        }
        colour_bar(&bar, lo, hi, "c (molecules/m³)")
    })
}

/// A straight segment (from, to) in plot units (µm).
type Segment = ((f64, f64), (f64, f64));

/// Arrows of the in-plane velocity on a coarse lattice, the largest one as long as the lattice spacing.
fn flow_arrows(plane: &MidPlane, lx: f64, ly: f64) -> Option<Vec<Segment>> {
    let [u, v] = plane.velocity.as_ref()?;
    let step = lx / ARROWS_ALONG_X as f64;
    let rows = ((ly / step).floor() as usize).max(1);
    let h = plane.spacing * 1e6;
    let mut samples = Vec::new();
    for r in 0..rows {
        for s in 0..ARROWS_ALONG_X {
            let (x, y) = ((s as f64 + 0.5) * step, (r as f64 + 0.5) * ly / rows as f64);
            let (i, j) = (((x / h) as usize).min(plane.nx - 1), ((y / h) as usize).min(plane.ny - 1));
            let n = i + plane.nx * j;
            if !plane.concentration[n].is_finite() {
                continue; // inside a cell
            }
            samples.push(((x, y), (u[n], v[n])));
        }
    }
    let max = samples.iter().map(|(_, (a, b))| (a * a + b * b).sqrt()).fold(0.0, f64::max);
    if max <= 0.0 {
        return None;
    }
    let scale = 0.8 * step / max;
    Some(
        samples
            .into_iter()
            .map(|((x, y), (a, b))| {
                ((x - 0.5 * a * scale, y - 0.5 * b * scale), (x + 0.5 * a * scale, y + 0.5 * b * scale))
            })
            .collect(),
    )
}

/// Shaft and two head strokes of an arrow from `from` to `to`; `head` is the head length over the arrow length.
pub fn arrow(from: (f64, f64), to: (f64, f64), head: f64) -> Vec<Vec<(f64, f64)>> {
    let (dx, dy) = (to.0 - from.0, to.1 - from.1);
    let back = |angle: f64| {
        let (c, s) = (angle.cos(), angle.sin());
        (to.0 - head * (c * dx - s * dy), to.1 - head * (s * dx + c * dy))
    };
    vec![vec![from, to], vec![back(0.45), to, back(-0.45)]]
}

/// A vertical viridis colour bar with ticks and the quantity with its unit.
pub fn colour_bar<DB: DrawingBackend>(
    area: &DrawingArea<DB, plotters::coord::Shift>,
    lo: f64,
    hi: f64,
    label: &str,
) -> anyhow::Result<()> {
    let mut chart = drawing(
        ChartBuilder::on(area)
            .margin_top(45)
            .margin_bottom(57)
            .margin_left(8)
            .margin_right(10)
            .y_label_area_size(0)
            .right_y_label_area_size(78)
            .build_cartesian_2d(0.0..1.0, lo..hi),
    )?;
    let steps = 200;
    drawing(chart.draw_series((0..steps).map(|s| {
        let (a, b) =
            (lo + (hi - lo) * s as f64 / steps as f64, lo + (hi - lo) * (s + 1) as f64 / steps as f64);
        Rectangle::new([(0.0, a), (1.0, b)], colour_maps::field((s as f64 + 0.5) / steps as f64).filled())
    })))?;
    drawing(
        chart
            .configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_labels(6)
            .y_label_formatter(&|v| significant(*v, 3))
            .label_style((FONT, 13))
            .y_desc(label)
            .axis_desc_style((FONT, 14))
            .draw(),
    )?;
    Ok(())
}
