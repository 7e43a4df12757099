//! Histogram of the per-cell direction error on a log axis, with the readable level (the summary's
//! `readable_error`, 1 without it): left of it a cell tells front from back within the integration time, right
//! of it it fails. Cells with an infinite error (no front–back contrast) fail too; they are counted in the
//! legend, not drawn at the axis edge.

use std::path::Path;

use plotters::prelude::*;

use super::run_data::RunFigureData;
use super::style::legend::along;
use super::style::{
    chart, colour_maps, drawing, place_legend, register_fonts, significant, titled, write_png, Axis,
    FigureRecord, Legend, Scale, Swatch, LEVEL, MUTED,
};

const BINS: usize = 30;
const PLOT_HEIGHT: f64 = 480.0;

/// The failed fraction's words: "failed: 12 of 300 cells (4 %)".
pub fn failed_text(failed: usize, total: usize) -> String {
    let percent = if total > 0 { 100.0 * failed as f64 / total as f64 } else { 0.0 };
    format!("failed: {failed} of {total} cells ({} %)", significant(percent, 2))
}

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<FigureRecord> {
    register_fonts();
    let level = data.readable_error;
    let errors: Vec<f64> = data.cells.iter().map(|c| c.direction_error).collect();
    let finite: Vec<f64> = errors.iter().copied().filter(|e| e.is_finite() && *e > 0.0).collect();
    let infinite = errors.iter().filter(|e| e.is_infinite() && **e > 0.0).count();
    let missing = errors.len() - finite.len() - infinite;
    let failed = finite.iter().filter(|&&e| e > level).count() + infinite;
    // Bins in log10, one edge on the readable level.
    let logs: Vec<f64> = finite.iter().map(|e| e.log10()).collect();
    let (lo, hi) = logs.iter().fold((level.log10(), level.log10()), |(a, b), &v| (a.min(v), b.max(v)));
    let (lo, hi) = (lo - 0.1, hi + 0.1);
    let width = (hi - lo) / BINS as f64;
    let shift = (level.log10() - lo).rem_euclid(width);
    let start = lo + shift - width;
    let bins = BINS + 2;
    let mut counts = vec![0usize; bins];
    for v in &logs {
        counts[(((v - start) / width).floor() as usize).min(bins - 1)] += 1;
    }
    let x = Axis::between(
        10f64.powf(start),
        10f64.powf(start + bins as f64 * width),
        Scale::Log,
        "direction error",
    );
    let x = Axis { label: "direction error (dimensionless), log axis".into(), ..x };
    let top = counts.iter().copied().max().unwrap_or(0).max(1) as f64;
    let mut legend = Legend::default();
    let level_source = if data.readable_error == 1.0 { "" } else { " (from the summary)" };
    legend
        .add(Swatch::Line(LEVEL), format!("readable level: error = {}{level_source}", significant(level, 3)));
    legend.add(
        Swatch::Band(colour_maps::series(0)),
        format!("readable: {} of {} cells", finite.len() - (failed - infinite), errors.len()),
    );
    legend.add(Swatch::Band(MUTED), failed_text(failed, errors.len()));
    if infinite > 0 {
        legend.add(
            Swatch::Blank,
            format!("  of which {infinite} with infinite error (no contrast), not drawn"),
        );
    }
    if missing > 0 {
        legend.add(Swatch::Blank, format!("{missing} cells without a direction error, not drawn"));
    }
    let y = Axis::between(0.0, top, Scale::Linear, "cells")
        .with_headroom(Legend::room(legend.entries.len()), PLOT_HEIGHT);
    let time =
        data.integration_time.map_or(String::new(), |t| format!(" over {} h", significant(t / 3600.0, 3)));
    let mut record = FigureRecord {
        file: path.display().to_string(),
        not_drawn: infinite + missing,
        ..Default::default()
    };
    write_png(path, (1000, 620), |root| {
        let body = titled(root, &format!("Direction error per cell{time}"), None)?;
        let mut plot = chart(&body, &x, &y)?;
        let mut occupied = Vec::new();
        for (b, &n) in counts.iter().enumerate() {
            if n == 0 {
                continue;
            }
            let (x0, x1) = (start + b as f64 * width, start + (b + 1) as f64 * width);
            let colour = if x1 <= level.log10() + 1e-12 { colour_maps::series(0) } else { MUTED };
            drawing(plot.draw_series(std::iter::once(Rectangle::new(
                [(x0, 0.0), (x1, n as f64)],
                colour.mix(0.85).filled(),
            ))))?;
            let ((px0, py0), (px1, _)) =
                (plot.backend_coord(&(x0, n as f64)), plot.backend_coord(&(x1, 0.0)));
            occupied.extend((px0..=px1).step_by(3).map(|px| (px, py0)));
            record.points.push((10f64.powf(0.5 * (x0 + x1)), n as f64));
        }
        let lx = level.log10();
        drawing(plot.draw_series(std::iter::once(PathElement::new(
            vec![(lx, 0.0), (lx, y.range.1)],
            LEVEL.stroke_width(2),
        ))))?;
        occupied.extend(along(&[plot.backend_coord(&(lx, 0.0)), plot.backend_coord(&(lx, y.range.1))]));
        place_legend(root, &plot, &legend, occupied, &mut record)?;
        Ok(())
    })?;
    Ok(record.with_axes(x, y))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::figures::run_data::CellRow;

    fn cell(error: f64) -> CellRow {
        CellRow {
            centre: [1e-5; 3],
            radius: 5e-6,
            anisotropy: [0.1, 0.0, 0.0],
            anisotropy_along_flow: 0.1,
            direction_error: error,
            estimate_anisotropy_along_flow: None,
            split_along_flow: None,
        }
    }

    #[test]
    fn infinite_and_missing_errors_are_counted_not_drawn() {
        let data = RunFigureData {
            title: "test".into(),
            extent: [1e-4, 5e-5, 5e-5],
            plane: None,
            cells: [0.05, 0.5, 2.0, 300.0, f64::INFINITY, f64::NAN].into_iter().map(cell).collect(),
            meanfield_profile: vec![],
            isolated_anisotropy: None,
            integration_time: Some(3600.0),
            readable_error: 1.0,
        };
        let dir = tempfile::tempdir().unwrap();
        let record = draw(&data, &dir.path().join("h.png")).unwrap();
        assert_eq!(record.not_drawn, 2);
        assert_eq!(record.check(), Ok(()));
        assert!(record.notes.iter().any(|n| n.contains("failed: 3 of 6 cells (50 %)")), "{:?}", record.notes);
        assert!(record.notes.iter().any(|n| n.contains("1 with infinite error")), "{:?}", record.notes);
        assert_eq!(record.x.as_ref().map(|x| x.scale), Some(Scale::Log));
        // The bars hold every finite error: four cells drawn.
        assert_eq!(record.points.iter().map(|p| p.1).sum::<f64>(), 4.0);
    }
}
