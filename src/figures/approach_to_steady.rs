//! Approach to steady state of a transient run: against simulated time, the outlet concentration and each cell's
//! bound rate as fractions of their steady values (the cells as median with a p10–p90 band), with guides at
//! 90% and 99% (the `time_to_steady` thresholds of summary.json) and markers at the flow change and at
//! `window_start`.
//!
//! Read from the run folder alone: `summary.json` → `transient` (output times, outlet concentration and its
//! steady value), `cells_timeseries.csv` (`time`, `id`, `bound_rate`) and the final `cells.csv`
//! (`id`, `steady_bound_rate`, written for first-order uptake, where the bound rate is the sensed rate).

use std::collections::HashMap;
use std::path::Path;

use anyhow::{anyhow, Context};
use numkit::quantile_sorted;
use plotters::prelude::*;

use super::style::{drawing, register_fonts, viridis, write_png, FONT};

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
        })
    }
}

/// Time unit for a run of `length` seconds: (seconds per unit, label).
fn time_unit(length: f64) -> (f64, &'static str) {
    if length < 300.0 {
        (1.0, "s")
    } else if length < 3.0 * 3600.0 {
        (60.0, "min")
    } else {
        (3600.0, "h")
    }
}

/// Draws `figures/approach_to_steady.png` of the transient run folder `dir` into `path`.
pub fn draw(dir: &Path, path: &Path) -> anyhow::Result<()> {
    register_fonts();
    let data = Approach::read(dir)?;
    let (unit, unit_name) = time_unit(data.final_time);
    let x_end = data.final_time / unit;
    let values = data.outlet.iter().map(|p| p.1).chain(data.cells.iter().flat_map(|b| [b.p10, b.p90]));
    let (lo, hi) =
        values.filter(|v| v.is_finite()).fold((0.0_f64, 1.0_f64), |(lo, hi), v| (lo.min(v), hi.max(v)));
    // A little headroom above the top value; 0 always shown.
    let (y_lo, y_hi) = (lo - 0.03 * (hi - lo), hi + 0.08 * (hi - lo));
    // The legend goes where the curves are not at the end of the run: low when they end near steady.
    let last = data.outlet.last().map(|p| p.1).into_iter().chain(data.cells.last().map(|b| b.p10));
    let legend_at = if last.fold(f64::INFINITY, f64::min) > y_lo + 0.5 * (y_hi - y_lo) {
        SeriesLabelPosition::LowerRight
    } else {
        SeriesLabelPosition::UpperRight
    };
    let outlet_colour = viridis(0.15);
    let cell_colour = viridis(0.6);
    let guide = RGBColor(120, 120, 120);
    let flow_colour = RGBColor(200, 30, 30);
    let window_colour = RGBColor(90, 90, 90);
    write_png(path, (1000, 600), |root| {
        drawing(root.fill(&WHITE))?;
        let mut chart = drawing(
            ChartBuilder::on(root)
                .caption(format!("Approach to steady state: {}", data.title), (FONT, 20))
                .margin(14)
                .x_label_area_size(48)
                .y_label_area_size(64)
                .build_cartesian_2d(0.0..x_end, y_lo..y_hi),
        )?;
        drawing(
            chart
                .configure_mesh()
                .light_line_style(RGBColor(235, 235, 235))
                .x_desc(format!("simulated time ({unit_name})"))
                .y_desc("fraction of the steady value (1)")
                .x_label_formatter(&|v| super::style::tick(*v))
                .y_label_formatter(&|v| format!("{:.2}", if v.abs() < 1e-9 { 0.0 } else { *v }))
                .label_style((FONT, 14))
                .axis_desc_style((FONT, 15))
                .draw(),
        )?;
        if !data.cells.is_empty() {
            let mut outline: Vec<(f64, f64)> = data.cells.iter().map(|b| (b.time / unit, b.p90)).collect();
            outline.extend(data.cells.iter().rev().map(|b| (b.time / unit, b.p10)));
            drawing(
                chart.draw_series(std::iter::once(Polygon::new(outline, cell_colour.mix(0.25).filled()))),
            )?
            .label(format!("cells' bound rate, p10-p90 over {} cells", data.cells_counted))
            .legend(move |(x, y)| {
                Rectangle::new([(x, y - 6), (x + 20, y + 6)], cell_colour.mix(0.25).filled())
            });
            drawing(chart.draw_series(std::iter::once(PathElement::new(
                data.cells.iter().map(|b| (b.time / unit, b.median)).collect::<Vec<_>>(),
                cell_colour.stroke_width(3),
            ))))?
            .label("cells' bound rate, median (dots: output times)")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], cell_colour.stroke_width(3)));
        }
        let dots =
            data.cells.iter().map(|b| Circle::new((b.time / unit, b.median), 3, cell_colour.filled())).chain(
                data.outlet.iter().map(|&(t, f)| Circle::new((t / unit, f), 3, outlet_colour.filled())),
            );
        drawing(chart.draw_series(dots))?;
        if !data.outlet.is_empty() {
            drawing(chart.draw_series(std::iter::once(PathElement::new(
                data.outlet.iter().map(|&(t, f)| (t / unit, f)).collect::<Vec<_>>(),
                outlet_colour.stroke_width(2),
            ))))?
            .label("outlet concentration")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], outlet_colour.stroke_width(2)));
        }
        for (k, level) in [0.9, 0.99].into_iter().enumerate() {
            // Dashed: 60 dashes across the axis, each 60% of its period.
            let period = x_end / 60.0;
            let series = drawing(chart.draw_series((0..60).map(|d| {
                let x0 = d as f64 * period;
                PathElement::new(vec![(x0, level), (x0 + 0.6 * period, level)], guide.stroke_width(1))
            })))?;
            if k == 0 {
                series
                    .label("90% and 99% of steady")
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], guide.stroke_width(1)));
            }
        }
        let markers = [
            (data.flow_change, flow_colour, "flow change"),
            (data.window_start, window_colour, "sensing window opens"),
        ];
        for (at, colour, what) in markers {
            let Some(at) = at.filter(|t| *t / unit < x_end) else { continue };
            drawing(chart.draw_series(std::iter::once(PathElement::new(
                vec![(at / unit, y_lo), (at / unit, y_hi)],
                colour.stroke_width(2),
            ))))?
            .label(format!("{what} at {} {unit_name}", super::style::tick(at / unit)))
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], colour.stroke_width(2)));
        }
        if data.cells.is_empty() {
            drawing(
                chart.draw_series(std::iter::once(PathElement::new(vec![(0.0, y_lo), (0.0, y_lo)], WHITE))),
            )?
            .label("cells: no steady bound rate (written for first-order uptake only)")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], WHITE));
        }
        drawing(
            chart
                .configure_series_labels()
                .position(legend_at)
                .background_style(WHITE.mix(0.85))
                .border_style(RGBColor(160, 160, 160))
                .label_font((FONT, 14))
                .draw(),
        )?;
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn time_unit_follows_the_run_length() {
        assert_eq!(time_unit(90.0).1, "s");
        assert_eq!(time_unit(1800.0).1, "min");
        assert_eq!(time_unit(10.0 * 3600.0).1, "h");
    }
}
