//! Per-cell anisotropy over the layout, readable for hundreds of cells at every depth: the chamber seen from
//! above is cut into square tiles about two cell diameters wide; each tile is coloured by the mean anisotropy
//! along the flow of the cells whose centres it holds (at any depth) on the signed colour map, and carries one
//! arrow of the mean in-plane direction of those cells, as long as their agreement (the length of the mean of
//! their unit vectors: nearly a tile when all point alike, nothing when they cancel). Overlapping circles of
//! a 3-D layout projected onto one plane hide each other; tile averages do not.

use std::path::Path;

use plotters::prelude::*;

use super::run_data::RunFigureData;
use super::style::{
    arrow, chart, colour_bar, colour_maps, drawing, note, plot_box, register_fonts, significant, titled,
    write_png, Axis, FigureRecord, Scale, INK, MUTED,
};

/// Most tiles along the flow.
const MOST_TILES: usize = 24;

/// One tile's cells: count, mean anisotropy along the flow, resultant of in-plane unit directions.
#[derive(Clone, Copy, Default)]
struct Tile {
    count: usize,
    sum_along: f64,
    sum_direction: [f64; 2],
}

pub fn draw(data: &RunFigureData, path: &Path) -> anyhow::Result<FigureRecord> {
    register_fonts();
    let um = 1e6;
    let (lx, ly) = (data.extent[0] * um, data.extent[1] * um);
    let radius = data.cells.iter().map(|c| c.radius).find(|r| r.is_finite()).unwrap_or(1e-5) * um;
    let along_x = ((lx / (4.0 * radius)).round() as usize).clamp(1, MOST_TILES);
    let side = lx / along_x as f64;
    let along_y = ((ly / side).round() as usize).max(1);
    let side_y = ly / along_y as f64;
    let mut tiles = vec![Tile::default(); along_x * along_y];
    let mut not_drawn = 0;
    for cell in &data.cells {
        let (x, y) = (cell.centre[0] * um, cell.centre[1] * um);
        let a = cell.anisotropy;
        if !(x.is_finite()
            && y.is_finite()
            && cell.anisotropy_along_flow.is_finite()
            && a.iter().all(|v| v.is_finite()))
        {
            not_drawn += 1;
            continue;
        }
        let (i, j) = (((x / side) as usize).min(along_x - 1), ((y / side_y) as usize).min(along_y - 1));
        let tile = &mut tiles[i + along_x * j];
        tile.count += 1;
        tile.sum_along += cell.anisotropy_along_flow;
        let planar = a[0].hypot(a[1]);
        if planar > 0.0 {
            tile.sum_direction[0] += a[0] / planar;
            tile.sum_direction[1] += a[1] / planar;
        }
    }
    let top = tiles
        .iter()
        .filter(|t| t.count > 0)
        .map(|t| (t.sum_along / t.count as f64).abs())
        .fold(0.0, f64::max);
    let top = if top > 0.0 { top } else { 1.0 };
    let most = tiles.iter().map(|t| t.count).max().unwrap_or(0);
    let drawn_cells: usize = tiles.iter().map(|t| t.count).sum();

    let plot_w = 860.0;
    let plot_h = (plot_w * ly / lx).clamp(160.0, 860.0);
    let (main_w, main_h) = (plot_w as u32 + 112, plot_h as u32 + 66);
    let (width, height) = (main_w + 150, main_h + 58 + 62);
    let x = Axis { range: (0.0, lx), ..Axis::between(0.0, lx, Scale::Linear, "x (µm), flow along +x") };
    let y = Axis { range: (0.0, ly), ..Axis::between(0.0, ly, Scale::Linear, "y (µm)") };
    let colour_axis =
        Axis::between(-top, top, Scale::Linear, "tile mean of the anisotropy along the flow (dimensionless)");
    let mut record = FigureRecord { file: path.display().to_string(), not_drawn, ..Default::default() };
    write_png(path, (width, height), |root| {
        let subtitle = format!(
            "seen from above: {} µm tiles, each averaging the cells at every depth ({drawn_cells} cells, up to {most} per tile)",
            significant(side, 2)
        );
        let body = titled(root, "Which way cells sense the cue, across the chamber", Some(&subtitle))?;
        let (upper, _) = body.split_vertically(main_h);
        let (main, bar) = upper.split_horizontally(main_w);
        let mut plot = chart(&main, &x, &y)?;
        for j in 0..along_y {
            for i in 0..along_x {
                let tile = tiles[i + along_x * j];
                let (x0, y0) = (i as f64 * side, j as f64 * side_y);
                if tile.count == 0 {
                    continue;
                }
                let mean = tile.sum_along / tile.count as f64;
                drawing(plot.draw_series(std::iter::once(Rectangle::new(
                    [(x0, y0), (x0 + side, y0 + side_y)],
                    colour_maps::signed(0.5 + 0.5 * mean / top).filled(),
                ))))?;
                let n = tile.count as f64;
                let (dx, dy) = (tile.sum_direction[0] / n, tile.sum_direction[1] / n);
                let half = 0.45 * side.min(side_y);
                let centre = (x0 + 0.5 * side, y0 + 0.5 * side_y);
                record.points.push((centre.0, centre.1));
                if dx.hypot(dy) > 0.05 {
                    let from = (centre.0 - dx * half, centre.1 - dy * half);
                    let to = (centre.0 + dx * half, centre.1 + dy * half);
                    for seg in arrow(from, to, 0.3) {
                        drawing(
                            plot.draw_series(std::iter::once(PathElement::new(seg, INK.stroke_width(2)))),
                        )?;
                    }
                }
            }
        }
        // Tile borders, light, so empty tiles read as empty rather than as zero.
        for i in 0..=along_x {
            let x0 = i as f64 * side;
            drawing(
                plot.draw_series(std::iter::once(PathElement::new(
                    vec![(x0, 0.0), (x0, ly)],
                    MUTED.mix(0.25),
                ))),
            )?;
        }
        for j in 0..=along_y {
            let y0 = j as f64 * side_y;
            drawing(
                plot.draw_series(std::iter::once(PathElement::new(
                    vec![(0.0, y0), (lx, y0)],
                    MUTED.mix(0.25),
                ))),
            )?;
        }
        let left = plot_box(&plot).0 .0;
        let key = "arrow: mean in-plane direction of the tile's cells, its length their agreement (nearly a tile when all point alike); blank tiles hold no cell";
        note(root, key, (left, height as i32 - 54))?;
        record.notes.push(key.to_string());
        if not_drawn > 0 {
            let text = format!("{not_drawn} cells without a finite anisotropy (no bound flux) are left out");
            note(root, &text, (left, height as i32 - 34))?;
            record.notes.push(text);
        }
        colour_bar(&bar, &colour_axis, colour_maps::signed)?;
        Ok(())
    })?;
    Ok(record.with_axes(x, y))
}
