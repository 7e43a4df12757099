//! `DIR/crossing.png`: the crossing of a search, with its interval, against the first numeric other axis; one
//! series per combination of the remaining other axes. With no numeric other axis there is nothing to draw
//! against and no figure.

use std::path::Path;

use anyhow::Result;
use plotters::prelude::*;

use super::crossing_table::CrossingRow;
use super::sweep_curves::key_in_words;
use crate::figures::style::legend::along;
use crate::figures::style::{
    axis_label, chart, choose_scale, colour_maps, drawing, place_legend, register_fonts, significant, titled,
    write_png, Axis, DisplayUnit, FigureRecord, Legend, Swatch,
};

const SIZE: (u32, u32) = (900, 600);
const PLOT_HEIGHT: f64 = 440.0;

/// What the figure is about.
pub struct CrossingFigure<'a> {
    /// The other axes (key, SI unit) in the rows' order.
    pub others: Vec<(&'a str, Option<&'a str>)>,
    /// The searched axis, its SI unit and whether it was searched in log space.
    pub searched: &'a str,
    pub searched_unit: Option<&'a str>,
    pub log: bool,
    /// The metric and the level it crosses.
    pub metric: &'a str,
    pub level: f64,
}

/// Draw `rows` into `file`; `None` when no other axis is numeric.
pub fn draw_crossing(
    file: &Path,
    figure: &CrossingFigure,
    rows: &[CrossingRow],
) -> Result<Option<FigureRecord>> {
    let Some(k) = figure.others.iter().position(|(_, unit)| unit.is_some()) else { return Ok(None) };
    if rows.is_empty() {
        return Ok(None);
    }
    register_fonts();
    let x_unit = DisplayUnit::of(figure.others[k].1.unwrap_or(""), rows[0].values[k].0.unwrap_or(1.0));
    let typical = rows.iter().map(|r| r.crossing).find(|v| v.is_finite()).unwrap_or(1.0);
    let y_unit = DisplayUnit::of(figure.searched_unit.unwrap_or(""), typical);
    let mut series: Vec<(String, Vec<&CrossingRow>)> = Vec::new();
    for row in rows {
        let key = figure
            .others
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != k)
            .map(|(j, (name, unit))| {
                let (si, text) = &row.values[j];
                let shown = match (si, unit) {
                    (Some(si), Some(unit)) => {
                        let u = DisplayUnit::of(unit, *si);
                        format!("{} {}", significant(si * u.factor, 3), u.label)
                    }
                    _ => text.clone(),
                };
                format!("{} = {}", key_in_words(name), shown.trim())
            })
            .collect::<Vec<_>>()
            .join(", ");
        match series.iter_mut().find(|(s, _)| *s == key) {
            Some((_, members)) => members.push(row),
            None => series.push((key, vec![row])),
        }
    }
    let drawn = |r: &CrossingRow| r.crossing.is_finite() && r.values[k].0.is_some_and(f64::is_finite);
    let not_drawn = rows.iter().filter(|r| !drawn(r)).count();
    let xs: Vec<f64> =
        rows.iter().filter(|r| drawn(r)).filter_map(|r| r.values[k].0).map(|v| v * x_unit.factor).collect();
    let ys: Vec<f64> = rows
        .iter()
        .filter(|r| drawn(r))
        .flat_map(|r| [r.crossing, r.low, r.high])
        .filter(|v| v.is_finite())
        .map(|v| v * y_unit.factor)
        .collect();
    let mut legend = Legend::default();
    if series.len() > 1 && series.len() <= 8 {
        for (s, (key, _)) in series.iter().enumerate() {
            legend.add(Swatch::Line(colour_maps::series(s)), key.clone());
        }
    }
    legend.add(
        Swatch::Blank,
        format!("where {} = {}, with its interval", figure.metric, significant(figure.level, 3)),
    );
    if not_drawn > 0 {
        legend.add(Swatch::Blank, format!("{not_drawn} combinations without a crossing, not drawn"));
    }
    let x_words = key_in_words(figure.others[k].0);
    let x = Axis::fit(&xs, choose_scale(&xs, false), false, &axis_label(&x_words, &x_unit));
    let y_words = format!("crossing {}", key_in_words(figure.searched));
    let y = Axis::fit(&ys, choose_scale(&ys, figure.log), false, &axis_label(&y_words, &y_unit))
        .with_headroom(Legend::room(legend.entries.len()), PLOT_HEIGHT);
    let mut record = FigureRecord {
        file: file.display().to_string(),
        not_drawn,
        y_positive_quantity: ys.iter().all(|v| *v > 0.0),
        ..Default::default()
    };
    let title = format!("Crossing {} against {}", key_in_words(figure.searched), x_words);
    write_png(file, SIZE, |root| {
        let body = titled(root, &title, None)?;
        let plot = chart(&body, &x, &y)?;
        let mut occupied = Vec::new();
        for (s, (_, members)) in series.iter().enumerate() {
            let colour = colour_maps::series(s);
            let mut points: Vec<(f64, &CrossingRow)> = members
                .iter()
                .filter(|r| drawn(r))
                .map(|r| (r.values[k].0.unwrap_or(f64::NAN) * x_unit.factor, *r))
                .collect();
            points.sort_by(|a, b| a.0.total_cmp(&b.0));
            let at = |xv: f64, v: f64| plot.backend_coord(&(x.map(xv), y.map(v * y_unit.factor)));
            let line: Vec<(i32, i32)> = points.iter().map(|(xv, r)| at(*xv, r.crossing)).collect();
            occupied.extend(along(&line));
            drawing(root.draw(&PathElement::new(line, colour.stroke_width(2))))?;
            for (xv, r) in &points {
                if r.low.is_finite() && r.high.is_finite() {
                    let (top, bottom) = (at(*xv, r.high), at(*xv, r.low));
                    occupied.extend(along(&[top, bottom]));
                    drawing(root.draw(&PathElement::new(vec![top, bottom], colour.stroke_width(2))))?;
                    for end in [top, bottom] {
                        drawing(root.draw(&PathElement::new(
                            vec![(end.0 - 4, end.1), (end.0 + 4, end.1)],
                            colour.stroke_width(2),
                        )))?;
                    }
                    record.points.push((*xv, r.high * y_unit.factor));
                    record.points.push((*xv, r.low * y_unit.factor));
                }
                drawing(root.draw(&Circle::new(at(*xv, r.crossing), 4, colour.filled())))?;
                record.points.push((*xv, r.crossing * y_unit.factor));
            }
        }
        place_legend(root, &plot, &legend, occupied, &mut record)?;
        Ok(())
    })?;
    Ok(Some(record.with_axes(x, y)))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn crossing_against_the_other_axis_keeps_the_house_rules() {
        let row = |u: f64, x: f64, status: &'static str| CrossingRow {
            values: vec![(Some(u), String::new()), (Some(0.1), String::new())],
            crossing: x,
            low: 0.95 * x,
            high: 1.05 * x,
            cases: 8,
            status,
            seeds_needed: None,
        };
        let rows = [row(5e-7, 0.04, "found"), row(2e-6, 0.1, "found"), row(8e-6, f64::NAN, "not_bracketed")];
        let figure = CrossingFigure {
            others: vec![("flow.mean_velocity", Some("m s^-1")), ("cells.radius", Some("m"))],
            searched: "cells.layout.volume_fraction",
            searched_unit: Some("1"),
            log: true,
            metric: "direction_error_median",
            level: 1.0,
        };
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("crossing.png");
        let record = draw_crossing(&file, &figure, &rows).unwrap().expect("a numeric other axis");
        assert_eq!(record.check(), Ok(()));
        assert_eq!(record.not_drawn, 1);
        // Each drawn crossing with both ends of its interval, in display units (µm/s on x).
        let near =
            |x: f64, y: f64| record.points.iter().any(|p| (p.0 - x).abs() < 1e-9 && (p.1 - y).abs() < 1e-12);
        assert!(near(0.5, 0.04) && near(2.0, 0.1) && near(2.0, 0.105), "{:?}", record.points);
        assert!(file.exists());
        let text_only = CrossingFigure { others: vec![("medium.model", None)], ..figure };
        assert!(draw_crossing(&file, &text_only, &rows).unwrap().is_none());
    }
}
