//! `DIR/crossing.csv` and `DIR/crossing.png` of a crossing search, from the plan record and the collected
//! cases alone (so that `collect DIR` rewrites them): one row per combination of the other axes — their
//! values (SI, units in the header as `key [unit]`), the crossing of the searched axis with its interval (SI),
//! the cases run for it, the status (`found`, `seed_limited`, `not_bracketed`, `budget_spent`, or `searching`
//! while rounds remain) and, for `seed_limited`, the seeds that would shrink the interval to the precision
//! asked. The search decides from its observations only, so its last step over every finished case of a
//! combination is the result the search ended with.

use std::path::Path;

use anyhow::{Context, Result};

use super::collect::{ColumnData, SweepTable};
use super::crossing_figure::{draw_crossing, CrossingFigure};
use super::plan_record::PlanRecord;
use crate::io::number_text::format_real;
use crate::io::write_atomic;
use crate::sensing::crossing_search::{next_step, Observation, Status, Step};

/// File name in the sweep folder.
pub const CROSSING_FILE: &str = "crossing.csv";

/// One combination's row, for the table and the figure.
#[derive(Clone, Debug, PartialEq)]
pub struct CrossingRow {
    /// The other axes' values: SI number, or text.
    pub values: Vec<(Option<f64>, String)>,
    pub crossing: f64,
    pub low: f64,
    pub high: f64,
    pub cases: usize,
    pub status: &'static str,
    pub seeds_needed: Option<usize>,
}

/// The header (other axes, then the result columns) and rows of a search; `None` for a plain sweep.
pub fn crossing_rows(record: &PlanRecord, table: &SweepTable) -> Option<(Vec<String>, Vec<CrossingRow>)> {
    let find = record.find.as_ref()?;
    let others: Vec<usize> =
        (0..record.axes.len()).filter(|&a| a != find.axis_index && !record.axes[a].replicate).collect();
    let with_unit = |name: &str, unit: &Option<String>| match unit {
        Some(u) => format!("{name} [{u}]"),
        None => name.to_string(),
    };
    let mut header: Vec<String> =
        others.iter().map(|&a| with_unit(&record.axes[a].key, &record.axes[a].unit)).collect();
    for name in ["crossing", "crossing_low", "crossing_high"] {
        header.push(with_unit(name, &record.axes[find.axis_index].unit));
    }
    header.extend(["cases", "status", "seeds_needed"].map(String::from));
    let metric = match table.column(&find.metric).map(|c| &c.data) {
        Some(ColumnData::Real(v)) => v.clone(),
        _ => vec![f64::NAN; record.cases.len()],
    };
    let unfinished: Vec<bool> = match table.column("status").map(|c| &c.data) {
        Some(ColumnData::Text(s)) => s.iter().map(|s| s == "not_done").collect(),
        _ => vec![true; record.cases.len()],
    };
    // Combinations in the order of their first case (every round asks for them in the same order): the
    // other axes' values as written, that first case, and the observations.
    let mut groups: Vec<(Vec<&str>, usize, Vec<Observation>)> = Vec::new();
    let mut searching: Vec<bool> = Vec::new();
    for (i, (case, value)) in record.cases.iter().zip(metric).enumerate() {
        let key: Vec<&str> = others.iter().map(|&a| case.values[a].text.as_str()).collect();
        let index = match groups.iter().position(|(k, ..)| *k == key) {
            Some(g) => g,
            None => {
                groups.push((key, i, Vec::new()));
                searching.push(false);
                groups.len() - 1
            }
        };
        searching[index] |= unfinished[i];
        let x = case.values[find.axis_index].si.unwrap_or(f64::NAN);
        let observations = &mut groups[index].2;
        match observations.iter_mut().find(|o| o.x == x) {
            Some(o) => o.values.push(value),
            None => observations.push(Observation { x, values: vec![value] }),
        }
    }
    let params = find.search;
    let rows = groups
        .iter()
        .zip(searching)
        .map(|((_, first, observations), searching)| {
            let values = others
                .iter()
                .map(|&a| {
                    let v = &record.cases[*first].values[a];
                    (v.si.filter(|_| record.axes[a].unit.is_some()), v.text.trim_matches('"').to_string())
                })
                .collect();
            let cases = observations.iter().map(|o| o.values.len()).sum();
            match next_step(&params, observations) {
                Step::Done(c) if !searching => CrossingRow {
                    values,
                    crossing: c.crossing,
                    low: c.low,
                    high: c.high,
                    cases: c.cases,
                    status: c.status.name(),
                    seeds_needed: match c.status {
                        Status::SeedLimited { seeds_needed } => Some(seeds_needed),
                        _ => None,
                    },
                },
                _ => CrossingRow {
                    values,
                    crossing: f64::NAN,
                    low: f64::NAN,
                    high: f64::NAN,
                    cases,
                    status: "searching",
                    seeds_needed: None,
                },
            }
        })
        .collect();
    Some((header, rows))
}

/// The text of `crossing.csv`.
pub fn crossing_csv(header: &[String], rows: &[CrossingRow]) -> Result<Vec<u8>> {
    let mut writer =
        csv::WriterBuilder::new().terminator(csv::Terminator::Any(b'\n')).from_writer(Vec::new());
    writer.write_record(header)?;
    for row in rows {
        let mut fields: Vec<String> =
            row.values.iter().map(|(si, text)| si.map(format_real).unwrap_or_else(|| text.clone())).collect();
        fields.extend([row.crossing, row.low, row.high].map(format_real));
        fields.push(row.cases.to_string());
        fields.push(row.status.to_string());
        fields.push(row.seeds_needed.map(|n| n.to_string()).unwrap_or_default());
        writer.write_record(&fields)?;
    }
    writer.into_inner().map_err(|e| anyhow::anyhow!("cannot assemble crossing.csv: {e}"))
}

/// Write `crossing.csv` and (when there is a numeric other axis to draw against) `crossing.png` into `dir`
/// for a crossing search; its header and rows, or `None` for a plain sweep.
pub fn write_crossing(
    dir: &Path,
    record: &PlanRecord,
    table: &SweepTable,
) -> Result<Option<(Vec<String>, Vec<CrossingRow>)>> {
    let (Some(find), Some((header, rows))) = (record.find.as_ref(), crossing_rows(record, table)) else {
        return Ok(None);
    };
    let path = dir.join(CROSSING_FILE);
    write_atomic(&path, &crossing_csv(&header, &rows)?)
        .with_context(|| format!("cannot write {}", path.display()))?;
    let others = (0..record.axes.len())
        .filter(|&a| a != find.axis_index && !record.axes[a].replicate)
        .map(|a| (record.axes[a].key.as_str(), record.axes[a].unit.as_deref()))
        .collect();
    let figure = CrossingFigure {
        others,
        searched: &find.axis,
        searched_unit: record.axes[find.axis_index].unit.as_deref(),
        log: find.search.log,
        metric: &find.metric,
        level: find.search.level,
    };
    let file = dir.join("crossing.png");
    draw_crossing(&file, &figure, &rows).with_context(|| format!("cannot draw {}", file.display()))?;
    Ok(Some((header, rows)))
}
