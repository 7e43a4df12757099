//! Own against neighbour signal along the flow: for every cell with the self/neighbour split, the along-flow
//! components of the part of its anisotropy vector due to its own secretion and of the part due to everything
//! else, against x. Cells are drawn faintly; over equal-width x bins the mean of each part is drawn with its
//! 95 % interval across the bin's cells (Student t), the two parts side by side so their bars never overlap.
//! The two parts add up to the anisotropy along the flow, so where they meet the zero line from opposite sides
//! the neighbours cancel the cell's own cue.

use std::path::Path;

use plotters::prelude::*;

use super::run_data::RunFigureData;
use super::style::legend::along;
use super::style::{
    chart, colour_maps, drawing, place_legend, register_fonts, titled, write_png, Axis, FigureRecord, Legend,
    Scale, Swatch, INK,
};
use crate::sensing::student_t::ReplicateSummary;

/// Height of the plot area in pixels (for the legend's headroom).
const PLOT_HEIGHT: f64 = 500.0;
/// Cells per bin aimed at, and the most bins.
const CELLS_PER_BIN: usize = 5;
const MAX_BINS: usize = 10;

/// Whether the run has the split for some cell (the figure is drawn only then).
pub fn has_split(data: &RunFigureData) -> bool {
    data.cells.iter().any(|c| c.split_along_flow.is_some())
}

/// One x bin: its centre (µm) and the spread of each part over its cells.
struct Bin {
    centre: f64,
    width: f64,
    parts: [ReplicateSummary; 2],
}

fn bins(cells: &[(f64, [f64; 2])], lo: f64, hi: f64) -> Vec<Bin> {
    let count = (cells.len() / CELLS_PER_BIN).clamp(1, MAX_BINS);
    let width = if hi > lo { (hi - lo) / count as f64 } else { 1.0 };
    (0..count)
        .filter_map(|b| {
            let inside: Vec<&(f64, [f64; 2])> = cells
                .iter()
                .filter(|(x, _)| ((x - lo) / width).floor().clamp(0.0, (count - 1) as f64) as usize == b)
                .collect();
            if inside.is_empty() {
                return None;
            }
            let part = |k: usize| ReplicateSummary::of(&inside.iter().map(|c| c.1[k]).collect::<Vec<f64>>());
            Some(Bin { centre: lo + (b as f64 + 0.5) * width, width, parts: [part(0), part(1)] })
        })
        .collect()
}

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<FigureRecord> {
    register_fonts();
    let um = 1e6;
    let split: Vec<(f64, [f64; 2])> =
        data.cells.iter().filter_map(|c| c.split_along_flow.map(|p| (c.centre[0] * um, p))).collect();
    let cells: Vec<(f64, [f64; 2])> =
        split.iter().copied().filter(|(x, p)| x.is_finite() && p.iter().all(|v| v.is_finite())).collect();
    let not_drawn = split.len() - cells.len();
    let (lo, hi) =
        cells.iter().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), c| (a.min(c.0), b.max(c.0)));
    let bins = bins(&cells, lo, hi);
    let mut values: Vec<f64> = cells.iter().flat_map(|c| c.1).collect();
    for bin in &bins {
        for p in &bin.parts {
            values.extend([p.mean, p.ci95_low, p.ci95_high].into_iter().filter(|v| v.is_finite()));
        }
    }
    let rows = 3 + usize::from(not_drawn > 0);
    let y = Axis::fit(&values, Scale::Linear, true, "anisotropy along the flow, part (dimensionless)")
        .with_headroom(Legend::room(rows), PLOT_HEIGHT);
    let x = Axis::between(0.0, data.extent[0] * um, Scale::Linear, "x (µm), downstream");
    let mut record = FigureRecord { file: path.display().to_string(), not_drawn, ..Default::default() };
    let colours = [colour_maps::series(0), colour_maps::series(1)];
    let title = format!(
        "Own and neighbour signal along the flow ({} of {} cells split)",
        split.len(),
        data.cells.len()
    );
    write_png(path, (1000, 640), |root| {
        let body = titled(root, &title, None)?;
        let mut plot = chart(&body, &x, &y)?;
        let map = |(px, py): (f64, f64)| (x.map(px), y.map(py));
        let mut occupied = Vec::new();
        let (x0, x1) = x.range;
        let zero = [(x0, y.map(0.0)), (x1, y.map(0.0))];
        drawing(plot.draw_series(std::iter::once(PathElement::new(zero.to_vec(), INK.stroke_width(1)))))?;
        occupied.extend(along(&zero.map(|p| plot.backend_coord(&p))));
        for (k, colour) in colours.iter().enumerate() {
            let points: Vec<(f64, f64)> = cells.iter().map(|c| (c.0, c.1[k])).collect();
            drawing(
                plot.draw_series(points.iter().map(|&p| Circle::new(map(p), 2, colour.mix(0.35).filled()))),
            )?;
            occupied.extend(points.iter().map(|&p| plot.backend_coord(&map(p))));
            record.points.extend(points);
        }
        for bin in &bins {
            for (k, (part, colour)) in bin.parts.iter().zip(colours).enumerate() {
                // Own part left of the bin centre, neighbours right: the two intervals never overlap.
                let at = bin.centre + (k as f64 - 0.5) * 0.2 * bin.width;
                if part.ci95_low.is_finite() {
                    let bar = vec![map((at, part.ci95_low)), map((at, part.ci95_high))];
                    occupied.extend(along(&[plot.backend_coord(&bar[0]), plot.backend_coord(&bar[1])]));
                    drawing(
                        plot.draw_series(std::iter::once(PathElement::new(bar, colour.stroke_width(2)))),
                    )?;
                    record.points.extend([(at, part.ci95_low), (at, part.ci95_high)]);
                }
                let mark = map((at, part.mean));
                drawing(plot.draw_series(std::iter::once(Circle::new(mark, 5, colour.filled()))))?;
                occupied.push(plot.backend_coord(&mark));
                record.points.push((at, part.mean));
            }
        }
        let mut legend = Legend::default();
        legend.add(
            Swatch::Dot(colours[0]),
            "from the cell's own secretion: bin mean, 95 % interval over its cells",
        );
        legend.add(Swatch::Dot(colours[1]), "from the other cells and the inlet: bin mean, 95 % interval");
        legend.add(
            Swatch::Blank,
            "faint dots: single cells; the two parts add up to the anisotropy along the flow",
        );
        if not_drawn > 0 {
            legend.add(Swatch::Blank, format!("{not_drawn} split cells without finite parts, not drawn"));
        }
        place_legend(root, &plot, &legend, occupied, &mut record)?;
        Ok(())
    })?;
    Ok(record.with_axes(x, y))
}

#[cfg(test)]
mod tests {
    use super::bins;

    #[test]
    fn bins_hold_every_cell_once_and_intervals_need_two_cells() {
        let cells: Vec<(f64, [f64; 2])> = (0..12).map(|i| (i as f64, [1.0 + i as f64, -1.0])).collect();
        let b = bins(&cells, 0.0, 11.0);
        assert_eq!(b.len(), 2);
        assert_eq!(b.iter().map(|b| b.parts[0].count).sum::<usize>(), 12);
        assert!((b[0].parts[0].mean - 3.5).abs() < 1e-12 && b[0].parts[0].ci95_low < 3.5);
        let one = bins(&cells[..1], 0.0, 0.0);
        assert_eq!(one.len(), 1);
        assert!(one[0].parts[1].ci95_low.is_nan() && one[0].parts[1].mean == -1.0);
    }
}
