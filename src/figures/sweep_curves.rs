//! Figures of a collected sweep: each metric against each swept parameter, one PNG per pair, in
//! `DIR/figures/<metric>_vs_<parameter>.png`. Per-cell aggregates are drawn as the median with a p10–p90 bar;
//! the cases that share the values of the other axes form one series, joined through the mean over replicate
//! seeds. A parameter swept on a log scale gets a log axis.

use std::path::{Path, PathBuf};

use anyhow::{Context, Result};
use plotters::prelude::*;
use rayon::prelude::*;

use super::style::{register_fonts, write_png, FONT};
use crate::sweep::axis::Scale;
use crate::sweep::collect::{ColumnData, ColumnRole, SweepTable};
use crate::sweep::plan_record::PlanRecord;

/// Summary metrics worth a figure (the others, such as iteration counts, are diagnostics).
const PLOTTED_METRICS: [&str; 4] = [
    "estimates.measured_outlet_concentration",
    "mass_balance.uptake",
    "flow.pressure_drop",
    "cells.volume_fraction",
];

const SIZE: (u32, u32) = (800, 560);

/// One curve to draw: y (and optional p10/p90) against a parameter.
struct Metric<'a> {
    name: &'a str,
    unit: &'a str,
    y: &'a [f64],
    band: Option<(&'a [f64], &'a [f64])>,
}

fn real<'a>(table: &'a SweepTable, name: &str) -> Option<&'a [f64]> {
    match &table.column(name)?.data {
        ColumnData::Real(v) => Some(v),
        ColumnData::Text(_) => None,
    }
}

/// Draw every metric against every numeric, non-replicate swept parameter; returns the files written.
pub fn draw_sweep_curves(table: &SweepTable, plan: &PlanRecord, out_dir: &Path) -> Result<Vec<PathBuf>> {
    let mut metrics = Vec::new();
    for column in &table.columns {
        if let ColumnRole::Aggregate { quantity, stat: "median" } = &column.role {
            let band = real(table, &format!("{quantity}_p10")).zip(real(table, &format!("{quantity}_p90")));
            if let ColumnData::Real(y) = &column.data {
                metrics.push(Metric { name: &column.name, unit: &column.unit, y, band });
            }
        }
    }
    for name in PLOTTED_METRICS {
        if let (Some(column), Some(y)) = (table.column(name), real(table, name)) {
            metrics.push(Metric { name, unit: &column.unit, y, band: None });
        }
    }
    let parameters: Vec<(usize, &[f64])> = plan
        .axes
        .iter()
        .enumerate()
        .filter(|(_, axis)| !axis.replicate)
        .filter_map(|(a, axis)| real(table, &axis.key).map(|x| (a, x)))
        .collect();
    if parameters.is_empty() || metrics.is_empty() {
        return Ok(Vec::new());
    }
    std::fs::create_dir_all(out_dir).with_context(|| format!("cannot create {}", out_dir.display()))?;
    register_fonts();
    let mut figures = Vec::new();
    for &(a, x) in &parameters {
        // Series: cases with equal values on every other non-replicate axis.
        let others: Vec<usize> = parameters.iter().map(|(b, _)| *b).filter(|&b| b != a).collect();
        let series_key = |row: usize| -> String {
            others
                .iter()
                .map(|&b| {
                    format!("{} = {}", plan.axes[b].key, plan.cases[row].values[b].text.trim_matches('"'))
                })
                .collect::<Vec<_>>()
                .join(", ")
        };
        let mut series: Vec<(String, Vec<usize>)> = Vec::new();
        for row in 0..table.rows {
            let key = series_key(row);
            match series.iter_mut().find(|(k, _)| *k == key) {
                Some((_, rows)) => rows.push(row),
                None => series.push((key, vec![row])),
            }
        }
        figures.push((a, x, series));
    }
    // Drawn on all cores: rasterising and compressing the PNGs is most of `collect`'s time, which a local
    // sweep spends after its cases, with the other cores idle.
    let pairs: Vec<(usize, &Metric)> =
        (0..figures.len()).flat_map(|f| metrics.iter().map(move |m| (f, m))).collect();
    pairs
        .par_iter()
        .map(|&(f, metric)| {
            let (a, x, series) = &figures[f];
            let axis = &plan.axes[*a];
            let file = out_dir.join(format!("{}_vs_{}.png", metric.name, axis.key));
            draw_one(
                &file,
                axis.key.as_str(),
                axis.unit.as_deref().unwrap_or(""),
                axis.scale == Scale::Log,
                x,
                metric,
                series,
            )
            .with_context(|| format!("cannot draw {}", file.display()))?;
            Ok(file)
        })
        .collect()
}

fn draw_one(
    file: &Path,
    x_name: &str,
    x_unit: &str,
    log_x: bool,
    x: &[f64],
    metric: &Metric,
    series: &[(String, Vec<usize>)],
) -> Result<()> {
    let tx = |v: f64| if log_x { v.log10() } else { v };
    let finite = |v: f64| v.is_finite();
    let usable = |row: usize| finite(tx(x[row])) && finite(metric.y[row]);
    let rows: Vec<usize> = (0..x.len()).filter(|&r| usable(r)).collect();
    let mut y_values: Vec<f64> = rows.iter().map(|&r| metric.y[r]).collect();
    if let Some((lo, hi)) = metric.band {
        y_values.extend(rows.iter().flat_map(|&r| [lo[r], hi[r]]).filter(|v| v.is_finite()));
    }
    let (x0, x1) = padded(rows.iter().map(|&r| tx(x[r])));
    let (y0, y1) = padded(y_values.into_iter());

    write_png(file, SIZE, |root| {
        root.fill(&WHITE)?;
        let label =
            |n: &str, u: &str| if u.is_empty() || u == "1" { n.to_string() } else { format!("{n} [{u}]") };
        let mut chart = ChartBuilder::on(root)
            .caption(format!("{} vs {}", metric.name, x_name), (FONT, 20))
            .margin(12)
            .x_label_area_size(45)
            .y_label_area_size(80)
            .build_cartesian_2d(x0..x1, y0..y1)?;
        let x_label =
            if log_x { format!("{} (log scale)", label(x_name, x_unit)) } else { label(x_name, x_unit) };
        chart
            .configure_mesh()
            // Major grid lines only: the default light lines clutter the curves and cost `collect` CPU time.
            .max_light_lines(0)
            .x_desc(x_label)
            .y_desc(label(metric.name, metric.unit))
            .x_label_formatter(&|v| short(if log_x { 10f64.powf(*v) } else { *v }))
            .y_label_formatter(&|v| short(*v))
            .label_style((FONT, 13))
            .draw()?;
        for (s, (key, members)) in series.iter().enumerate() {
            let colour = Palette99::pick(s).to_rgba();
            let points: Vec<usize> = members.iter().copied().filter(|&r| usable(r)).collect();
            // Mean over replicates at each x, joined in x order.
            let mut xs: Vec<f64> = points.iter().map(|&r| tx(x[r])).collect();
            xs.sort_by(f64::total_cmp);
            xs.dedup();
            let line: Vec<(f64, f64)> = xs
                .iter()
                .map(|&xv| {
                    let ys: Vec<f64> =
                        points.iter().filter(|&&r| tx(x[r]) == xv).map(|&r| metric.y[r]).collect();
                    (xv, ys.iter().sum::<f64>() / ys.len() as f64)
                })
                .collect();
            let drawn = chart.draw_series(std::iter::once(PathElement::new(line, colour.stroke_width(2))))?;
            if series.len() > 1 && series.len() <= 8 {
                drawn.label(key.clone()).legend(move |(lx, ly)| {
                    PathElement::new(vec![(lx, ly), (lx + 18, ly)], colour.stroke_width(2))
                });
            }
            if let Some((lo, hi)) = metric.band {
                chart.draw_series(points.iter().filter(|&&r| lo[r].is_finite() && hi[r].is_finite()).map(
                    |&r| PathElement::new(vec![(tx(x[r]), lo[r]), (tx(x[r]), hi[r])], colour.stroke_width(1)),
                ))?;
            }
            chart.draw_series(
                points.iter().map(|&r| Circle::new((tx(x[r]), metric.y[r]), 4, colour.filled())),
            )?;
        }
        if series.len() > 1 && series.len() <= 8 {
            chart
                .configure_series_labels()
                .background_style(WHITE.mix(0.8))
                .border_style(BLACK)
                .label_font((FONT, 12))
                .draw()?;
        }
        Ok(())
    })
}

/// The range of `values` padded by 5% (or ±1 around a single value; 0..1 when there is none).
fn padded(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let (lo, hi) = values.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| (lo.min(v), hi.max(v)));
    if !lo.is_finite() || !hi.is_finite() {
        return (0.0, 1.0);
    }
    let span = hi - lo;
    let pad = if span > 0.0 { 0.05 * span } else { (0.1 * lo.abs()).max(1e-30) };
    (lo - pad, hi + pad)
}

/// Tick text: plain for moderate magnitudes, scientific otherwise.
fn short(v: f64) -> String {
    if v == 0.0 {
        "0".into()
    } else if (1e-2..1e4).contains(&v.abs()) {
        format!("{}", (v * 1e3).round() / 1e3)
    } else {
        format!("{v:.2e}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_and_ticks() {
        assert_eq!(padded([1.0, 3.0].into_iter()), (0.9, 3.1));
        assert_eq!(padded([2.0].into_iter()), (1.8, 2.2));
        assert_eq!(padded(std::iter::empty()), (0.0, 1.0));
        assert_eq!(short(1.5e-6), "1.50e-6");
        assert_eq!(short(0.25), "0.25");
    }
}
