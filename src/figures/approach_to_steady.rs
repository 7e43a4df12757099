//! Approach to steady state of a transient run: against simulated time, the outlet concentration and each cell's
//! bound rate as fractions of their steady values (the cells as median with a p10–p90 band), with guides at
//! 90% and 99% (the `time_to_steady` thresholds of summary.json) and markers at the flow change and at
//! `window_start`. The time axis is logarithmic when steady state comes early (before a tenth of the run) or the
//! output times span more than two decades. A second figure shows the fraction of cells with a readable cue
//! (direction error at most the readable level) against time, from the instantaneous counts and from the counts
//! accumulated since `window_start`.
//!
//! Read from the run folder alone: `summary.json` → `transient` (output times, outlet concentration and its
//! steady value), `cells_timeseries.csv` (`time`, `id`, `bound_rate`) and the final `cells.csv`
//! (`id`, `steady_bound_rate`, written for first-order uptake, where the bound rate is the sensed rate).

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use anyhow::{anyhow, Context};
use numkit::quantile_sorted;
use plotters::prelude::*;

use super::direction_error_histogram::failed_text;
use super::style::legend::along;
use super::style::{
    chart, colour_maps, drawing, place_legend, register_fonts, significant, titled, write_png, Axis,
    DisplayUnit, FigureRecord, Legend, Scale, Swatch, LEVEL, MUTED,
};

/// Whether the run folder holds a transient run (`summary.json` → `solve_mode`).
pub fn is_transient(dir: &Path) -> bool {
    std::fs::read_to_string(dir.join("summary.json"))
        .ok()
        .and_then(|text| serde_json::from_str::<serde_json::Value>(&text).ok())
        .is_some_and(|s| s["solve_mode"] == "transient")
}

/// Median and p10/p90 of the cells' fractions at one time.
struct Band {
    time: f64,
    p10: f64,
    median: f64,
    p90: f64,
}

/// What the figure shows, in SI (times in s, fractions in 1).
struct Approach {
    title: String,
    final_time: f64,
    outlet: Vec<(f64, f64)>,
    cells: Vec<Band>,
    cells_counted: usize,
    flow_change: Option<f64>,
    window_start: Option<f64>,
    /// When the outlet concentration came within 1 % of steady.
    steady_at: Option<f64>,
}

fn read_json(path: &Path) -> anyhow::Result<serde_json::Value> {
    let text = std::fs::read_to_string(path).with_context(|| format!("cannot read {}", path.display()))?;
    serde_json::from_str(&text).with_context(|| format!("{} is not valid JSON", path.display()))
}

/// Per cell id, its steady bound rate from the final `cells.csv` (empty when the column is absent).
fn steady_rates(path: &Path) -> anyhow::Result<HashMap<u64, f64>> {
    let mut reader =
        csv::Reader::from_path(path).with_context(|| format!("cannot read {}", path.display()))?;
    let header = reader.headers()?.clone();
    let (Some(id), Some(steady)) =
        (header.iter().position(|h| h == "id"), header.iter().position(|h| h == "steady_bound_rate"))
    else {
        return Ok(HashMap::new());
    };
    let mut rates = HashMap::new();
    for record in reader.records() {
        let record = record?;
        let id = record.get(id).and_then(|s| s.parse::<u64>().ok());
        let rate = record.get(steady).and_then(|s| s.parse::<f64>().ok());
        if let (Some(id), Some(rate)) = (id, rate) {
            if rate.is_finite() && rate > 0.0 {
                rates.insert(id, rate);
            }
        }
    }
    Ok(rates)
}

/// Per output time, the sorted fractions `bound_rate / steady_bound_rate` of the cells.
fn cell_fractions(path: &Path, steady: &HashMap<u64, f64>) -> anyhow::Result<Vec<(f64, Vec<f64>)>> {
    let mut reader =
        csv::Reader::from_path(path).with_context(|| format!("cannot read {}", path.display()))?;
    let header = reader.headers()?.clone();
    let need = |name: &str| {
        header
            .iter()
            .position(|h| h == name)
            .ok_or_else(|| anyhow!("{} has no column {name}", path.display()))
    };
    let (time, id, bound) = (need("time")?, need("id")?, need("bound_rate")?);
    let mut by_time: Vec<(f64, Vec<f64>)> = Vec::new();
    for record in reader.records() {
        let record = record?;
        let t = record.get(time).and_then(|s| s.parse::<f64>().ok());
        let i = record.get(id).and_then(|s| s.parse::<u64>().ok());
        let b = record.get(bound).and_then(|s| s.parse::<f64>().ok());
        let (Some(t), Some(i), Some(b)) = (t, i, b) else { continue };
        let Some(reference) = steady.get(&i) else { continue };
        match by_time.last_mut() {
            Some((last, values)) if *last == t => values.push(b / reference),
            _ => by_time.push((t, vec![b / reference])),
        }
    }
    for (_, values) in &mut by_time {
        values.retain(|v| v.is_finite());
        values.sort_by(f64::total_cmp);
    }
    by_time.retain(|(_, v)| !v.is_empty());
    Ok(by_time)
}

impl Approach {
    fn read(dir: &Path) -> anyhow::Result<Self> {
        let summary = read_json(&dir.join("summary.json"))?;
        let transient = &summary["transient"];
        let numbers = |v: &serde_json::Value| -> Vec<Option<f64>> {
            v.as_array().map(|a| a.iter().map(|x| x.as_f64()).collect()).unwrap_or_default()
        };
        let times = numbers(&transient["outputs"]["time"]);
        let starts_at_zero = transient["initial_condition"] == "zero";
        let mut outlet = Vec::new();
        if let Some(steady) = transient["steady_outlet_concentration"].as_f64().filter(|c| *c > 0.0) {
            if starts_at_zero {
                outlet.push((0.0, 0.0));
            }
            for (t, c) in times.iter().zip(numbers(&transient["outputs"]["outlet_concentration"])) {
                if let (Some(t), Some(c)) = (t, c) {
                    outlet.push((*t, c / steady));
                }
            }
        }
        let steady = steady_rates(&dir.join("cells.csv"))?;
        let mut cells = Vec::new();
        if !steady.is_empty() {
            if starts_at_zero {
                cells.push(Band { time: 0.0, p10: 0.0, median: 0.0, p90: 0.0 });
            }
            for (time, v) in cell_fractions(&dir.join("cells_timeseries.csv"), &steady)? {
                cells.push(Band {
                    time,
                    p10: quantile_sorted(&v, 0.1),
                    median: quantile_sorted(&v, 0.5),
                    p90: quantile_sorted(&v, 0.9),
                });
            }
        }
        let final_time = transient["final_time"]
            .as_f64()
            .or_else(|| times.iter().flatten().copied().reduce(f64::max))
            .filter(|t| *t > 0.0)
            .ok_or_else(|| anyhow!("{}: summary.json has no transient.final_time", dir.display()))?;
        Ok(Approach {
            title: summary["title"].as_str().unwrap_or("run").to_string(),
            final_time,
            outlet,
            cells,
            cells_counted: steady.len(),
            flow_change: summary["flow"]["change"]["time"].as_f64(),
            window_start: transient["window_start"].as_f64().filter(|t| *t > 0.0),
            steady_at: transient["time_to_steady"]["99_percent"]["outlet_concentration"].as_f64(),
        })
    }
}

/// Per output time: cells counted, and how many read their cue from the instantaneous direction error and from
/// the error of the counts accumulated since `window_start` (when the column exists).
struct Readable {
    time: f64,
    cells: usize,
    now: usize,
    window: Option<usize>,
}

fn readable_counts(path: &Path, level: f64) -> anyhow::Result<Vec<Readable>> {
    let mut reader =
        csv::Reader::from_path(path).with_context(|| format!("cannot read {}", path.display()))?;
    let header = reader.headers()?.clone();
    let find = |name: &str| header.iter().position(|h| h == name);
    let (Some(time), Some(error)) = (find("time"), find("direction_error")) else { return Ok(Vec::new()) };
    let window = find("window_direction_error");
    let mut out: Vec<Readable> = Vec::new();
    for record in reader.records() {
        let record = record?;
        let number = |i: usize| record.get(i).and_then(|s| s.parse::<f64>().ok());
        let Some(t) = number(time) else { continue };
        if out.last().map_or(true, |r| r.time != t) {
            out.push(Readable { time: t, cells: 0, now: 0, window: window.map(|_| 0) });
        }
        let row = out.last_mut().expect("pushed above");
        row.cells += 1;
        row.now += usize::from(number(error).is_some_and(|e| e <= level));
        if let (Some(count), Some(w)) = (row.window.as_mut(), window) {
            *count += usize::from(number(w).is_some_and(|e| e <= level));
        }
    }
    Ok(out)
}

/// Draws `approach_to_steady.png` and `readable_cue_over_time.png` of the transient run folder `dir` into
/// `folder`.
pub fn draw_all(
    dir: &Path,
    folder: &Path,
    readable_error: f64,
) -> anyhow::Result<Vec<(PathBuf, FigureRecord)>> {
    let data = Approach::read(dir)?;
    let times: Vec<f64> = data.outlet.iter().map(|p| p.0).chain(data.cells.iter().map(|b| b.time)).collect();
    let first = times.iter().copied().filter(|t| *t > 0.0).fold(f64::INFINITY, f64::min);
    let early = data.steady_at.is_some_and(|t| t < 0.1 * data.final_time);
    let scale = if first.is_finite() && (early || data.final_time / first > 100.0) {
        Scale::Log
    } else {
        Scale::Linear
    };
    let unit = DisplayUnit::of("s", data.final_time);
    let x_label = format!("simulated time ({})", unit.label);
    let (x_lo, x_hi) = if scale == Scale::Log {
        (first * unit.factor, data.final_time * unit.factor)
    } else {
        (0.0, data.final_time * unit.factor)
    };
    let x = Axis::between(x_lo, x_hi, scale, &x_label);
    let approach = folder.join("approach_to_steady.png");
    let mut drawn = vec![(approach.clone(), draw_approach(&data, &approach, &x, &unit)?)];
    let counts = readable_counts(&dir.join("cells_timeseries.csv"), readable_error)?;
    if !counts.is_empty() {
        let path = folder.join("readable_cue_over_time.png");
        let record = draw_readable(&data, &counts, readable_error, &path, &x, &unit)?;
        drawn.push((path, record));
    }
    Ok(drawn)
}

const PLOT_HEIGHT: f64 = 470.0;

fn draw_approach(data: &Approach, path: &Path, x: &Axis, unit: &DisplayUnit) -> anyhow::Result<FigureRecord> {
    register_fonts();
    let log = x.scale == Scale::Log;
    let shown = |t: f64| !log || t > 0.0;
    let outlet: Vec<(f64, f64)> =
        data.outlet.iter().filter(|p| shown(p.0)).map(|&(t, f)| (t * unit.factor, f)).collect();
    let cells: Vec<&Band> = data.cells.iter().filter(|b| shown(b.time)).collect();
    let mut values: Vec<f64> =
        outlet.iter().map(|p| p.1).chain(cells.iter().flat_map(|b| [b.p10, b.p90])).collect();
    values.extend([0.0, 1.0]);
    let mut legend = Legend::default();
    let outlet_colour = colour_maps::series(0);
    let cell_colour = colour_maps::series(2);
    if !cells.is_empty() {
        legend.add(
            Swatch::Band(cell_colour),
            format!("cells' bound rate: median and p10–p90 of {} cells", data.cells_counted),
        );
    } else {
        legend.add(Swatch::Blank, "cells: no steady bound rate (written for first-order uptake only)");
    }
    if !outlet.is_empty() {
        legend.add(Swatch::Line(outlet_colour), "outlet concentration");
    }
    legend.add(Swatch::Dashed(MUTED), "90 % and 99 % of steady");
    let markers: Vec<(f64, RGBColor, &str)> =
        [(data.flow_change, LEVEL, "flow change"), (data.window_start, MUTED, "sensing window opens")]
            .into_iter()
            .filter_map(|(at, c, what)| {
                at.filter(|t| x.contains(*t * unit.factor)).map(|t| (t * unit.factor, c, what))
            })
            .collect();
    for (at, colour, what) in &markers {
        legend.add(Swatch::Line(*colour), format!("{what} at {} {}", significant(*at, 3), unit.label));
    }
    let y = Axis::fit(&values, Scale::Linear, true, "fraction of the steady value (dimensionless)")
        .with_headroom(Legend::room(legend.entries.len()), PLOT_HEIGHT);
    let mut record = FigureRecord { file: path.display().to_string(), ..Default::default() };
    let subtitle = if log { Some("log time axis: steady state comes early in the run") } else { None };
    write_png(path, (1000, 620), |root| {
        let body = titled(root, &format!("Approach to steady state: {}", data.title), subtitle)?;
        let mut plot = chart(&body, x, &y)?;
        let map = |(t, f): (f64, f64)| (x.map(t), y.map(f));
        let mut occupied = Vec::new();
        if !cells.is_empty() {
            let mut outline: Vec<(f64, f64)> =
                cells.iter().map(|b| map((b.time * unit.factor, b.p90))).collect();
            outline.extend(cells.iter().rev().map(|b| map((b.time * unit.factor, b.p10))));
            occupied.extend(outline.iter().map(|p| plot.backend_coord(p)));
            drawing(
                plot.draw_series(std::iter::once(Polygon::new(outline, cell_colour.mix(0.25).filled()))),
            )?;
            let median: Vec<(f64, f64)> =
                cells.iter().map(|b| map((b.time * unit.factor, b.median))).collect();
            let pixels: Vec<(i32, i32)> = median.iter().map(|p| plot.backend_coord(p)).collect();
            occupied.extend(along(&pixels));
            drawing(
                plot.draw_series(std::iter::once(PathElement::new(median, cell_colour.stroke_width(3)))),
            )?;
            record.points.extend(cells.iter().flat_map(|b| {
                [
                    (b.time * unit.factor, b.p10),
                    (b.time * unit.factor, b.median),
                    (b.time * unit.factor, b.p90),
                ]
            }));
        }
        if !outlet.is_empty() {
            let line: Vec<(f64, f64)> = outlet.iter().map(|&p| map(p)).collect();
            let pixels: Vec<(i32, i32)> = line.iter().map(|p| plot.backend_coord(p)).collect();
            occupied.extend(along(&pixels));
            drawing(plot.draw_series(line.iter().map(|&p| Circle::new(p, 3, outlet_colour.filled()))))?;
            drawing(
                plot.draw_series(std::iter::once(PathElement::new(line, outlet_colour.stroke_width(2)))),
            )?;
            record.points.extend(outlet.iter().copied());
        }
        for level in [0.9, 0.99] {
            let (a, b) = x.range;
            let period = (b - a) / 60.0;
            drawing(plot.draw_series((0..60).map(|d| {
                let x0 = a + d as f64 * period;
                PathElement::new(vec![(x0, level), (x0 + 0.6 * period, level)], MUTED.stroke_width(1))
            })))?;
        }
        for (at, colour, _) in &markers {
            let (p0, p1) = ((x.map(*at), y.range.0), (x.map(*at), y.range.1));
            occupied.extend(along(&[plot.backend_coord(&p0), plot.backend_coord(&p1)]));
            drawing(
                plot.draw_series(std::iter::once(PathElement::new(vec![p0, p1], colour.stroke_width(2)))),
            )?;
        }
        place_legend(root, &plot, &legend, occupied, &mut record)?;
        Ok(())
    })?;
    Ok(record.with_axes(x.clone(), y))
}

fn draw_readable(
    data: &Approach,
    counts: &[Readable],
    level: f64,
    path: &Path,
    x: &Axis,
    unit: &DisplayUnit,
) -> anyhow::Result<FigureRecord> {
    register_fonts();
    let log = x.scale == Scale::Log;
    let rows: Vec<&Readable> = counts.iter().filter(|r| r.cells > 0 && (!log || r.time > 0.0)).collect();
    let now: Vec<(f64, f64)> =
        rows.iter().map(|r| (r.time * unit.factor, r.now as f64 / r.cells as f64)).collect();
    let window: Vec<(f64, f64)> = rows
        .iter()
        .filter(|r| data.window_start.map_or(true, |w| r.time >= w))
        .filter_map(|r| r.window.map(|w| (r.time * unit.factor, w as f64 / r.cells as f64)))
        .collect();
    let mut legend = Legend::default();
    let now_colour = colour_maps::series(0);
    let window_colour = colour_maps::series(1);
    legend.add(Swatch::Line(now_colour), "from the current bound flux (integration time of the case)");
    if !window.is_empty() {
        legend.add(Swatch::Line(window_colour), "from the counts since the sensing window opened");
    }
    let last = rows.last();
    if let Some(r) = last {
        legend.add(
            Swatch::Blank,
            format!("at the end, current flux: {}", failed_text(r.cells - r.now, r.cells)),
        );
    }
    legend.add(Swatch::Blank, format!("readable: direction error ≤ {}", significant(level, 3)));
    let y = Axis::between(0.0, 1.0, Scale::Linear, "fraction of cells with a readable cue (dimensionless)")
        .with_headroom(Legend::room(legend.entries.len()), PLOT_HEIGHT);
    let mut record = FigureRecord { file: path.display().to_string(), ..Default::default() };
    write_png(path, (1000, 620), |root| {
        let body = titled(root, &format!("Cells that can read the cue: {}", data.title), None)?;
        let mut plot = chart(&body, x, &y)?;
        let mut occupied = Vec::new();
        for (series, colour) in [(&now, now_colour), (&window, window_colour)] {
            if series.is_empty() {
                continue;
            }
            let line: Vec<(f64, f64)> = series.iter().map(|&(t, f)| (x.map(t), f)).collect();
            let pixels: Vec<(i32, i32)> = line.iter().map(|p| plot.backend_coord(p)).collect();
            occupied.extend(along(&pixels));
            drawing(plot.draw_series(line.iter().map(|&p| Circle::new(p, 3, colour.filled()))))?;
            drawing(plot.draw_series(std::iter::once(PathElement::new(line, colour.stroke_width(2)))))?;
        }
        place_legend(root, &plot, &legend, occupied, &mut record)?;
        Ok(())
    })?;
    record.points.extend(now);
    record.points.extend(window);
    Ok(record.with_axes(x.clone(), y))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn readable_counts_per_output_time() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("series.csv");
        let text = "time,id,direction_error,window_direction_error\n30,0,0.5,inf\n30,1,2,inf\n60,0,0.4,0.9\n60,1,inf,1.5\n";
        std::fs::write(&path, text).unwrap();
        let counts = readable_counts(&path, 1.0).unwrap();
        assert_eq!(counts.len(), 2);
        assert_eq!((counts[0].cells, counts[0].now, counts[0].window), (2, 1, Some(0)));
        assert_eq!((counts[1].cells, counts[1].now, counts[1].window), (2, 1, Some(1)));
    }
}
