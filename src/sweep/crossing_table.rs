//! `DIR/crossing.csv`: one row per combination of the other axes of a crossing search — their values (SI,
//! units in the header as `key [unit]`), the crossing of the searched axis with its interval (SI), the cases
//! run for it, the status (`found`, `seed_limited`, `not_bracketed`, `budget_spent`, or `searching` while
//! rounds remain) and, for `seed_limited`, the seeds that would shrink the interval to the precision asked.

use super::axis::AxisValue;
use super::crossing_rounds::Progress;
use super::plan_record::PlanRecord;
use crate::io::number_text::format_real;
use crate::sensing::crossing_search::Status;

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

/// The header (other axes, then the result columns) and rows of a search.
pub fn crossing_rows(progress: &Progress) -> (Vec<String>, Vec<CrossingRow>) {
    let record = PlanRecord::of(&progress.plan);
    let find = progress.plan.sweep.find.as_ref();
    let searched = find.map_or(0, |f| f.axis_index);
    let with_unit = |name: &str, unit: &Option<String>| match unit {
        Some(u) => format!("{name} [{u}]"),
        None => name.to_string(),
    };
    let mut header: Vec<String> = progress
        .combinations
        .first()
        .map(|c| c.iter().map(|(a, _)| with_unit(&record.axes[*a].key, &record.axes[*a].unit)).collect())
        .unwrap_or_default();
    let unit = &record.axes[searched].unit;
    for name in ["crossing", "crossing_low", "crossing_high"] {
        header.push(with_unit(name, unit));
    }
    header.extend(["cases", "status", "seeds_needed"].map(String::from));
    let rows = progress
        .combinations
        .iter()
        .zip(&progress.results)
        .zip(&progress.cases)
        .map(|((combination, result), &cases)| {
            let values = combination
                .iter()
                .map(|(a, v): &(usize, AxisValue)| {
                    let numeric = record.axes[*a].unit.is_some();
                    (v.si.filter(|_| numeric), v.text.trim_matches('"').to_string())
                })
                .collect();
            match result {
                Some(c) => CrossingRow {
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
                None => CrossingRow {
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
    (header, rows)
}

/// The text of `crossing.csv`.
pub fn crossing_csv(progress: &Progress) -> anyhow::Result<Vec<u8>> {
    let (header, rows) = crossing_rows(progress);
    let mut writer =
        csv::WriterBuilder::new().terminator(csv::Terminator::Any(b'\n')).from_writer(Vec::new());
    writer.write_record(&header)?;
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
