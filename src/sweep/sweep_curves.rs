//! Figures of a collected sweep: each metric against each swept parameter, one PNG per pair, in
//! `DIR/figures/<metric>_vs_<parameter>.png`. Names in words with display units. Cases that share the values of
//! every other non-replicate axis (numeric or text) form one series; at each parameter value the series shows
//! the mean over replicate seeds with its 95 % Student-t interval (for per-cell quantities, of the cases'
//! medians over their cells). A parameter swept on a log scale gets a log axis, as do positive metrics spanning
//! more than two decades; a text-valued parameter is an axis of categories, never averaged over. The direction
//! error figures carry the readable level. Legends sit where no data are.

use std::path::{Path, PathBuf};

use anyhow::{Context, Result};
use plotters::prelude::*;
use rayon::prelude::*;

use super::axis::Scale as SweepScale;
use super::collect::{ColumnData, ColumnRole, SweepTable};
use super::plan_record::PlanRecord;
use crate::figures::style::legend::along;
use crate::figures::style::{
    axis_label, chart, choose_scale, colour_maps, draw_interval, drawing, place_legend, register_fonts,
    significant, titled, write_png, Axis, DisplayUnit, FigureRecord, Legend, Scale, Swatch, LEVEL,
};

/// Summary metrics worth a figure (the others, such as iteration counts, are diagnostics).
const PLOTTED_METRICS: [&str; 4] = [
    "estimates.measured_outlet_concentration",
    "mass_balance.uptake",
    "flow.pressure_drop",
    "cells.volume_fraction",
];

/// The direction error a cell must stay below to read its cue, until the summary carries `readable_error`.
const READABLE_ERROR: f64 = 1.0;

const SIZE: (u32, u32) = (900, 600);
const PLOT_HEIGHT: f64 = 440.0;

/// One quantity to draw against the parameters.
struct Metric<'a> {
    name: &'a str,
    /// Its description, and a short name in words for the axis.
    words: String,
    short: String,
    unit: &'a str,
    y: &'a [f64],
}

/// The x values of one parameter: numbers (SI) or text categories.
enum Values<'a> {
    Numbers(&'a [f64]),
    Categories(Vec<String>),
}

fn real<'a>(table: &'a SweepTable, name: &str) -> Option<&'a [f64]> {
    match &table.column(name)?.data {
        ColumnData::Real(v) => Some(v),
        ColumnData::Text(_) => None,
    }
}

/// A dotted case key in words: `flow.mean_velocity` → "flow mean velocity", `cells.radius` → "cell radius".
pub fn key_in_words(key: &str) -> String {
    key.split('.')
        .map(|part| if part == "cells" { "cell".to_string() } else { part.replace('_', " ") })
        .collect::<Vec<_>>()
        .join(" ")
}

/// Mean and 95 % half-width (NaN for a single value) of `values`, from the replicate statistics that
/// `sweep_groups.csv` is written with (one Student-t table in the program).
pub fn mean_interval(values: &[f64]) -> (f64, f64) {
    let group = crate::sensing::student_t::ReplicateSummary::of(values);
    (group.mean, group.ci95_high - group.mean)
}

/// Draw every metric against every non-replicate swept parameter; returns the files written.
pub fn draw_sweep_curves(table: &SweepTable, plan: &PlanRecord, out_dir: &Path) -> Result<Vec<PathBuf>> {
    Ok(draw_sweep_figures(table, plan, out_dir)?.into_iter().map(|(p, _)| p).collect())
}

/// As [`draw_sweep_curves`], with what each figure shows.
pub fn draw_sweep_figures(
    table: &SweepTable,
    plan: &PlanRecord,
    out_dir: &Path,
) -> Result<Vec<(PathBuf, FigureRecord)>> {
    let mut metrics = Vec::new();
    for column in &table.columns {
        if let (ColumnRole::Aggregate { stat: "median", .. }, ColumnData::Real(y)) =
            (&column.role, &column.data)
        {
            let what = column.description.split_once(": ").map_or(column.description.as_str(), |d| d.1);
            let words = format!("{what}, median over a case's cells");
            let short =
                format!("{}, median over cells", key_in_words(column.name.trim_end_matches("_median")));
            metrics.push(Metric { name: &column.name, words, short, unit: &column.unit, y });
        }
    }
    for name in PLOTTED_METRICS {
        if let (Some(column), Some(y)) = (table.column(name), real(table, name)) {
            let short = key_in_words(name.rsplit('.').next().unwrap_or(name));
            metrics.push(Metric { name, words: column.description.clone(), short, unit: &column.unit, y });
        }
    }
    let parameters: Vec<(usize, Values)> = plan
        .axes
        .iter()
        .enumerate()
        .filter(|(_, axis)| !axis.replicate)
        .filter_map(|(a, axis)| match table.column(&axis.key).map(|c| &c.data) {
            Some(ColumnData::Real(v)) => Some((a, Values::Numbers(v))),
            Some(ColumnData::Text(v)) => Some((a, Values::Categories(v.clone()))),
            // An axis of whole tables: one category per distinct table.
            None => super::table_axis::table_axis_labels(table, a).map(|v| (a, Values::Categories(v))),
        })
        .collect();
    if parameters.is_empty() || metrics.is_empty() {
        return Ok(Vec::new());
    }
    std::fs::create_dir_all(out_dir).with_context(|| format!("cannot create {}", out_dir.display()))?;
    register_fonts();
    let done: Vec<bool> = match table.column("status").map(|c| &c.data) {
        Some(ColumnData::Text(s)) => s.iter().map(|s| s == "done").collect(),
        _ => vec![true; table.rows],
    };
    // Drawn on all cores: rasterising and compressing the PNGs is most of `collect`'s time, which a local
    // sweep spends after its cases, with the other cores idle.
    let pairs: Vec<(usize, &Metric)> =
        (0..parameters.len()).flat_map(|p| metrics.iter().map(move |m| (p, m))).collect();
    pairs
        .par_iter()
        .map(|&(p, metric)| {
            let (a, values) = &parameters[p];
            let axis = &plan.axes[*a];
            // Series: cases with equal values on every other non-replicate axis, text axes included.
            let others: Vec<usize> = parameters.iter().map(|(b, _)| *b).filter(|b| b != a).collect();
            let mut series: Vec<(String, Vec<usize>)> = Vec::new();
            for row in (0..table.rows).filter(|&r| done[r]) {
                let key = others
                    .iter()
                    .map(|&b| {
                        let v = &plan.cases[row].values[b];
                        let shown = match (v.si, plan.axes[b].unit.as_deref()) {
                            (Some(si), Some(unit)) => {
                                let u = DisplayUnit::of(unit, si);
                                format!("{} {}", significant(si * u.factor, 3), u.label)
                            }
                            _ => v.text.trim_matches('"').to_string(),
                        };
                        format!("{} = {}", key_in_words(&plan.axes[b].key), shown.trim())
                    })
                    .collect::<Vec<_>>()
                    .join(", ");
                match series.iter_mut().find(|(k, _)| *k == key) {
                    Some((_, rows)) => rows.push(row),
                    None => series.push((key, vec![row])),
                }
            }
            let file = out_dir.join(format!("{}_vs_{}.png", metric.name, axis.key));
            let x_words = key_in_words(&axis.key);
            let unfinished = done.iter().filter(|d| !**d).count();
            let unit = axis.unit.as_deref().unwrap_or("");
            let log = axis.scale == SweepScale::Log;
            let record = draw_one(&file, &x_words, unit, log, values, metric, &series, unfinished)
                .with_context(|| format!("cannot draw {}", file.display()))?;
            Ok((file, record))
        })
        .collect()
}

/// One point of a series: x in plot units, mean, half-width, seeds.
struct Group {
    x: f64,
    x_shown: f64,
    mean: f64,
    half: f64,
}

#[allow(clippy::too_many_arguments)]
fn draw_one(
    file: &Path,
    x_words: &str,
    x_unit: &str,
    log_x: bool,
    values: &Values,
    metric: &Metric,
    series: &[(String, Vec<usize>)],
    unfinished: usize,
) -> Result<FigureRecord> {
    register_fonts();
    let y_unit =
        DisplayUnit::of(metric.unit, metric.y.iter().copied().find(|v| v.is_finite()).unwrap_or(1.0));
    let rows: Vec<usize> = series.iter().flat_map(|s| s.1.iter().copied()).collect();
    let (x, categories, x_unit) = match values {
        Values::Numbers(xs) => {
            let unit = DisplayUnit::of(x_unit, xs.iter().copied().find(|v| v.is_finite()).unwrap_or(1.0));
            let shown: Vec<f64> = rows.iter().map(|&r| xs[r] * unit.factor).collect();
            let scale = choose_scale(&shown, log_x);
            (Axis::fit(&shown, scale, false, &axis_label(x_words, &unit)), None, unit)
        }
        Values::Categories(names) => {
            let mut order: Vec<String> = Vec::new();
            for &r in &rows {
                if !order.contains(&names[r]) {
                    order.push(names[r].clone());
                }
            }
            let mut axis = Axis::between(
                -0.5,
                order.len() as f64 - 0.5,
                Scale::Linear,
                &format!("{x_words} (category)"),
            );
            axis.range = (-0.5, order.len() as f64 - 0.5);
            axis.ticks = (0..order.len()).map(|k| k as f64).collect();
            axis.tick_labels = order.clone();
            (axis, Some(order), DisplayUnit::dimensionless())
        }
    };
    let x_of = |row: usize| -> f64 {
        match values {
            Values::Numbers(xs) => xs[row] * x_unit.factor,
            Values::Categories(names) => {
                categories.as_ref().and_then(|c| c.iter().position(|n| *n == names[row])).unwrap_or(0) as f64
            }
        }
    };
    let mut not_drawn = 0;
    let mut groups: Vec<Vec<Group>> = Vec::new();
    for (_, members) in series {
        let mut xs: Vec<f64> = members.iter().map(|&r| x_of(r)).filter(|v| v.is_finite()).collect();
        xs.sort_by(f64::total_cmp);
        xs.dedup();
        let mut line = Vec::new();
        for xv in xs {
            let ys: Vec<f64> =
                members.iter().filter(|&&r| x_of(r) == xv).map(|&r| metric.y[r] * y_unit.factor).collect();
            let finite: Vec<f64> = ys.iter().copied().filter(|v| v.is_finite()).collect();
            not_drawn += ys.len() - finite.len();
            if finite.is_empty() {
                continue;
            }
            let (mean, half) = mean_interval(&finite);
            line.push(Group { x: x.map(xv), x_shown: xv, mean, half });
        }
        groups.push(line);
    }
    let mut y_values: Vec<f64> =
        groups.iter().flatten().flat_map(|g| [g.mean, g.mean - g.half, g.mean + g.half]).collect();
    let direction_error = metric.name.starts_with("direction_error");
    if direction_error {
        y_values.push(READABLE_ERROR);
    }
    let positive = y_values.iter().filter(|v| v.is_finite()).all(|v| *v > 0.0);
    let y_scale = choose_scale(&y_values, false);
    // On a log axis a lower interval end at or below zero cannot be drawn: such intervals are cut at the axis.
    let y_values: Vec<f64> = y_values.into_iter().filter(|v| y_scale != Scale::Log || *v > 0.0).collect();
    let mut legend = Legend::default();
    let named = series.len() > 1 && series.len() <= 8;
    if named {
        for (s, (key, _)) in series.iter().enumerate() {
            legend.add(Swatch::Line(colour_maps::series(s)), key.clone());
        }
    }
    let seeds = series.iter().flat_map(|s| &s.1).count() as f64
        / groups.iter().map(Vec::len).sum::<usize>().max(1) as f64;
    legend.add(
        Swatch::Blank,
        format!("mean over seeds with 95 % interval ({} cases per point on average)", significant(seeds, 2)),
    );
    if direction_error {
        legend.add(
            Swatch::Dashed(LEVEL),
            format!("readable level: error = {}", significant(READABLE_ERROR, 2)),
        );
    }
    if not_drawn > 0 {
        legend.add(Swatch::Blank, format!("{not_drawn} cases with a non-finite value, not drawn"));
    }
    if unfinished > 0 {
        legend.add(Swatch::Blank, format!("{unfinished} cases failed or not done, not drawn"));
    }
    let not_drawn = not_drawn + unfinished;
    let y = Axis::fit(&y_values, y_scale, false, &axis_label(&metric.short, &y_unit))
        .with_headroom(crate::figures::style::legend::Legend::room(legend.entries.len()), PLOT_HEIGHT);
    let mut record = FigureRecord {
        file: file.display().to_string(),
        not_drawn,
        categories: categories.clone(),
        y_positive_quantity: positive,
        ..Default::default()
    };
    let title = format!("{} against {}", capitalised(&metric.words), x_words);
    let title = if title.chars().count() > 80 {
        format!("{} against {}", capitalised(&metric.short), x_words)
    } else {
        title
    };
    write_png(file, SIZE, |root| {
        let body = titled(root, &title, None)?;
        let mut plot = chart(&body, &x, &y)?;
        let mut occupied = Vec::new();
        // Series side by side at a shared x, a few pixels apart, so their intervals do not overlap.
        let dodge = |s: usize| (s as f64 - 0.5 * (groups.len() as f64 - 1.0)) * 6.0;
        for (s, line) in groups.iter().enumerate() {
            let colour = colour_maps::series(s);
            let at = |g: &Group, v: f64| {
                let (px, py) = plot.backend_coord(&(g.x, y.map(v)));
                (px + dodge(s) as i32, py)
            };
            let pixels: Vec<(i32, i32)> = line.iter().map(|g| at(g, g.mean)).collect();
            occupied.extend(along(&pixels));
            drawing(root.draw(&PathElement::new(pixels.clone(), colour.stroke_width(2))))?;
            for g in line {
                if g.half.is_finite() {
                    let lo = if y.scale == Scale::Log && g.mean - g.half <= 0.0 {
                        y.unmap(y.range.0)
                    } else {
                        g.mean - g.half
                    };
                    let (top, bottom) = (at(g, g.mean + g.half), at(g, lo));
                    draw_interval(root, top, bottom, &colour, &mut occupied)?;
                    record.points.push((g.x_shown, g.mean + g.half));
                    if lo > 0.0 || y.scale != Scale::Log {
                        record.points.push((g.x_shown, lo));
                    }
                }
                drawing(root.draw(&Circle::new(at(g, g.mean), 4, colour.filled())))?;
                record.points.push((g.x_shown, g.mean));
            }
        }
        if direction_error {
            let level = y.map(READABLE_ERROR);
            let (x0, x1) = x.range;
            for d in (0..40).step_by(2) {
                let (a, b) = (x0 + (x1 - x0) * d as f64 / 40.0, x0 + (x1 - x0) * (d + 1) as f64 / 40.0);
                drawing(plot.draw_series(std::iter::once(PathElement::new(
                    vec![(a, level), (b, level)],
                    LEVEL.stroke_width(2),
                ))))?;
            }
            occupied.extend(along(&[plot.backend_coord(&(x0, level)), plot.backend_coord(&(x1, level))]));
        }
        place_legend(root, &plot, &legend, occupied, &mut record)?;
        Ok(())
    })?;
    Ok(record.with_axes(x, y))
}

fn capitalised(text: &str) -> String {
    let mut chars = text.chars();
    chars.next().map_or(String::new(), |c| c.to_uppercase().chain(chars).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn words_and_intervals() {
        assert_eq!(key_in_words("flow.mean_velocity"), "flow mean velocity");
        assert_eq!(key_in_words("cells.uptake.rate_constant"), "cell uptake rate constant");
        // Two values 1 and 3: mean 2, s = √2, half-width t(1) s/√2 = 12.7062 (A&S Table 26.10).
        let (mean, half) = mean_interval(&[1.0, 3.0]);
        assert_eq!(mean, 2.0);
        assert!((half - 12.7062).abs() < 1e-9, "{half}");
        assert!(mean_interval(&[4.0]).1.is_nan());
    }

    #[test]
    fn text_valued_axis_is_drawn_as_categories_never_averaged() {
        // Two uptake tables (text) × two seeds: each table is its own category with its own mean.
        let names: Vec<String> = ["table A", "table A", "table B", "table B"].map(String::from).to_vec();
        let y = [0.5, 0.7, 3.0, 5.0];
        let metric = Metric {
            name: "direction_error_median",
            words: "direction error".into(),
            short: "direction error".into(),
            unit: "1",
            y: &y,
        };
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("f.png");
        let series = vec![(String::new(), vec![0, 1, 2, 3])];
        let record =
            draw_one(&file, "uptake table", "", false, &Values::Categories(names), &metric, &series, 0)
                .unwrap();
        assert_eq!(record.check(), Ok(()));
        assert_eq!(record.categories.as_deref(), Some(&["table A".to_string(), "table B".to_string()][..]));
        // Means per category (0.6 at position 0, 4 at position 1), not one mean over both.
        assert!(
            record.points.contains(&(0.0, 0.6)) && record.points.contains(&(1.0, 4.0)),
            "{:?}",
            record.points
        );
        assert!(record.notes.iter().any(|n| n.contains("readable level")));
    }
}
