//! Mid-plane concentration slice as the excess over the background: in the horizontal plane through the middle
//! of the chamber, each grid cell's concentration minus the median of the slice at the same x (the ligand every
//! cell upstream has added, which rises along the flow and would otherwise dominate a linear colour scale). What
//! is left is each cell's own plume against its neighbours', on the signed colour map. Cells that the plane cuts
//! are smooth discs of their cut radius; arrows show the in-plane superficial velocity with a scale key.

use std::path::Path;

use plotters::prelude::*;

use super::run_data::{MidPlane, RunFigureData};
use super::style::{
    arrow, axis_label, chart, colour_bar, colour_maps, disc, drawing, note, plot_box, register_fonts,
    significant, titled, write_png, Axis, DisplayUnit, FigureRecord, Scale, INK,
};

/// Arrows across the chamber length.
const ARROWS_ALONG_X: usize = 16;
/// Fill of a cell where the plane cuts it.
const CELL_FILL: RGBColor = RGBColor(222, 218, 208);
/// The colour scale ends at this quantile of |excess|; the few grid cells beyond are counted on the figure.
const SATURATION_QUANTILE: f64 = 0.99;

/// Per grid cell of the plane, concentration minus the median of its column (same x), display units; NaN
/// inside cells. Also the background's first and last value.
fn excess(plane: &MidPlane, factor: f64) -> (Vec<f64>, (f64, f64)) {
    let mut out = vec![f64::NAN; plane.concentration.len()];
    let mut ends = (f64::NAN, f64::NAN);
    for i in 0..plane.nx {
        let column: Vec<f64> =
            (0..plane.ny).map(|j| plane.concentration[i + plane.nx * j] * factor).collect();
        let background = numkit::quantile::quantile(&column, 0.5);
        if i == 0 {
            ends.0 = background;
        }
        ends.1 = background;
        for (j, c) in column.iter().enumerate() {
            out[i + plane.nx * j] = c - background;
        }
    }
    (out, ends)
}

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<FigureRecord> {
    let Some(plane) = &data.plane else { return Ok(FigureRecord::default()) };
    register_fonts();
    let um = 1e6;
    let (lx, ly) = (plane.nx as f64 * plane.spacing * um, plane.ny as f64 * plane.spacing * um);
    // 1:1 aspect in the plot area: width fixed, height from the chamber's aspect ratio.
    let plot_w = 860.0;
    let plot_h = (plot_w * ly / lx).clamp(160.0, 860.0);
    let (main_w, main_h) = (plot_w as u32 + 112, plot_h as u32 + 66);
    let (width, height) = (main_w + 150, main_h + 58 + 56);
    let typical = numkit::quantile::quantile(&plane.concentration, 0.5);
    let unit = DisplayUnit::of("molecules/m^3", typical);
    let (excess, background) = excess(plane, unit.factor);
    let magnitudes: Vec<f64> = excess.iter().map(|e| e.abs()).filter(|e| e.is_finite()).collect();
    let top = numkit::quantile::quantile(&magnitudes, SATURATION_QUANTILE);
    let top = if top > 0.0 { top } else { 1.0 };
    let saturated = magnitudes.iter().filter(|m| **m > top).count();
    let colour_axis = Axis::between(-top, top, Scale::Linear, &axis_label("excess over background", &unit));
    let x = Axis::between(0.0, lx, Scale::Linear, "x (µm), flow along +x");
    let y = Axis::between(0.0, ly, Scale::Linear, "y (µm)");
    // Exact chamber bounds (no padding) for a field picture.
    let (x, y) = (Axis { range: (0.0, lx), ..x }, Axis { range: (0.0, ly), ..y });
    let cut: Vec<((f64, f64), f64)> = data
        .cells
        .iter()
        .filter(|c| (c.centre[2] - plane.z).abs() < c.radius)
        .map(|c| {
            let dz = c.centre[2] - plane.z;
            ((c.centre[0] * um, c.centre[1] * um), (c.radius * c.radius - dz * dz).sqrt() * um)
        })
        .collect();
    let mut record = FigureRecord { file: path.display().to_string(), ..Default::default() };
    let arrows = flow_arrows(plane, lx, ly);
    write_png(path, (width, height), |root| {
        let subtitle = format!(
            "mid-plane z = {} µm; background: the slice's median at the same x, {} → {} {} from inlet to outlet",
            significant(plane.z * um, 3),
            significant(background.0, 3),
            significant(background.1, 3),
            unit.label
        );
        let body = titled(root, "Ligand around each cell: excess over the background", Some(&subtitle))?;
        let (upper, _) = body.split_vertically(main_h);
        let (main, bar) = upper.split_horizontally(main_w);
        let mut plot = chart(&main, &x, &y)?;
        let h = plane.spacing * um;
        drawing(plot.draw_series((0..plane.ny).flat_map(|j| (0..plane.nx).map(move |i| (i, j))).map(
            |(i, j)| {
                let e = excess[i + plane.nx * j];
                let colour = if e.is_finite() { colour_maps::signed(0.5 + 0.5 * e / top) } else { CELL_FILL };
                let (x0, y0) = (i as f64 * h, j as f64 * h);
                Rectangle::new([(x0, y0), (x0 + h, y0 + h)], colour.filled())
            },
        )))?;
        for &(centre, r) in &cut {
            drawing(plot.draw_series(std::iter::once(Polygon::new(disc(centre, r), CELL_FILL.filled()))))?;
            let mut outline = disc(centre, r);
            outline.push(outline[0]);
            drawing(
                plot.draw_series(std::iter::once(PathElement::new(outline, INK.mix(0.7).stroke_width(1)))),
            )?;
        }
        let plot_px = plot_box(&plot);
        if let Some((segments, per_speed, largest)) = &arrows {
            for (from, to) in segments {
                drawing(plot.draw_series(
                    arrow(*from, *to, 0.35).into_iter().map(|seg| PathElement::new(seg, INK.stroke_width(1))),
                ))?;
            }
            // Scale key under the plot: a round speed near the largest one, in pixels of the plot's x scale.
            let pixels_per_um = (plot_px.1 .0 - plot_px.0 .0) as f64 / lx;
            let key_speed = round_down(*largest);
            let length = (key_speed * per_speed * pixels_per_um).round() as i32;
            let (x0, y0) = (plot_px.0 .0, height as i32 - 30);
            for seg in arrow((x0 as f64, y0 as f64), ((x0 + length) as f64, y0 as f64), 0.3) {
                let seg: Vec<(i32, i32)> =
                    seg.iter().map(|p| (p.0.round() as i32, p.1.round() as i32)).collect();
                drawing(root.draw(&PathElement::new(seg, INK.stroke_width(2))))?;
            }
            note(
                root,
                &format!("= {} µm/s superficial velocity (arrows in the plane)", significant(key_speed, 2)),
                (x0 + length + 10, y0 - 9),
            )?;
        }
        let mut stated = format!("{} cells cut by the plane, drawn as discs", cut.len());
        if saturated > 0 {
            stated.push_str(&format!(
                "; colour saturates beyond ±{} {} ({saturated} grid cells, {} %)",
                significant(top, 2),
                unit.label,
                significant(100.0 * saturated as f64 / magnitudes.len() as f64, 2)
            ));
        }
        note(root, &stated, (plot_px.0 .0 + 420, height as i32 - 39))?;
        record.notes.push(stated);
        colour_bar(&bar, &colour_axis, colour_maps::signed)?;
        Ok(())
    })?;
    Ok(record.with_axes(x, y))
}

/// Length of the largest arrow in plot units (µm) relative to the lattice step.
const ARROW_SPAN: f64 = 0.8;

/// The largest 1, 2 or 5 × 10ⁿ not above `v`.
fn round_down(v: f64) -> f64 {
    let power = 10f64.powf(v.log10().floor());
    [5.0, 2.0, 1.0].into_iter().map(|m| m * power).find(|s| *s <= v).unwrap_or(power)
}

/// A straight segment (from, to) in plot units (µm).
type Segment = ((f64, f64), (f64, f64));

/// Arrows of the in-plane velocity on a coarse lattice (the largest one 0.8 lattice steps long), the arrow
/// length in µm per µm/s, and the largest speed (µm/s).
fn flow_arrows(plane: &MidPlane, lx: f64, ly: f64) -> Option<(Vec<Segment>, f64, f64)> {
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
            samples.push(((x, y), (u[n] * 1e6, v[n] * 1e6)));
        }
    }
    let max = samples.iter().map(|(_, (a, b))| a.hypot(*b)).fold(0.0, f64::max);
    if max <= 0.0 || !max.is_finite() {
        return None;
    }
    let per_speed = ARROW_SPAN * step / max;
    let segments = samples
        .into_iter()
        .map(|((x, y), (a, b))| {
            let (dx, dy) = (0.5 * a * per_speed, 0.5 * b * per_speed);
            ((x - dx, y - dy), (x + dx, y + dy))
        })
        .collect();
    Some((segments, per_speed, max))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn background_is_the_median_of_each_column() {
        // Two columns of three: the excess is relative to each column's median; NaN (inside a cell) stays NaN.
        let plane = MidPlane {
            nx: 2,
            ny: 3,
            spacing: 1e-6,
            origin: [0.0, 0.0],
            z: 0.0,
            concentration: vec![1.0, 10.0, 2.0, 20.0, 6.0, f64::NAN],
            velocity: None,
        };
        let (e, ends) = excess(&plane, 1.0);
        assert_eq!(ends, (2.0, 15.0));
        assert_eq!(&e[..5], &[-1.0, -5.0, 0.0, 5.0, 4.0]);
        assert!(e[5].is_nan());
        assert_eq!(round_down(7.3), 5.0);
        assert_eq!(round_down(0.19), 0.1);
    }
}
