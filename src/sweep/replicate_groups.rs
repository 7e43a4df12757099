//! `DIR/sweep_groups.csv`: the cases of a sweep grouped by every swept parameter except the replicate seed,
//! one row per group in plan order, and for every metric of `sweep.csv` its mean over the group's finished
//! cases with standard deviation, count, minimum, maximum and the Student-t 95 % interval of the mean:
//! `<metric>.mean`, `<metric>.sd`, `<metric>.count`, `<metric>.min`, `<metric>.max`, `<metric>.ci95_low`,
//! `<metric>.ci95_high`. NaN values (a case without that metric) are left out of the count.

use super::collect::{ColumnData, ColumnRole, SweepColumn, SweepTable};
use super::plan_record::PlanRecord;
use crate::sensing::student_t::ReplicateSummary;

/// The statistics of each group, by column suffix.
const STATS: [(&str, &str); 7] = [
    ("mean", "mean over the group's finished cases"),
    ("sd", "sample standard deviation over the group's finished cases"),
    ("count", "finished cases with a value"),
    ("min", "smallest value in the group"),
    ("max", "largest value in the group"),
    ("ci95_low", "lower end of the Student-t 95 % interval of the mean"),
    ("ci95_high", "upper end of the Student-t 95 % interval of the mean"),
];

fn stat(s: &ReplicateSummary, name: &str) -> f64 {
    match name {
        "mean" => s.mean,
        "sd" => s.sd,
        "count" => s.count as f64,
        "min" => s.min,
        "max" => s.max,
        "ci95_low" => s.ci95_low,
        _ => s.ci95_high,
    }
}

/// Text of row `row` of a column (the grouping key).
fn key_text(column: &SweepColumn, row: usize) -> String {
    match &column.data {
        ColumnData::Real(v) => v[row].to_bits().to_string(),
        ColumnData::Text(v) => v[row].clone(),
    }
}

/// Row indices of each group, groups in order of first appearance.
pub fn group_rows(table: &SweepTable, plan: &PlanRecord) -> (Vec<usize>, Vec<Vec<usize>>) {
    let keys: Vec<usize> = table
        .columns
        .iter()
        .enumerate()
        .filter(|(_, c)| matches!(c.role, ColumnRole::Parameter { axis } if !plan.axes[axis].replicate))
        .map(|(i, _)| i)
        .collect();
    let mut groups: Vec<(Vec<String>, Vec<usize>)> = Vec::new();
    for row in 0..table.rows {
        let key: Vec<String> = keys.iter().map(|&i| key_text(&table.columns[i], row)).collect();
        match groups.iter_mut().find(|(k, _)| *k == key) {
            Some((_, rows)) => rows.push(row),
            None => groups.push((key, vec![row])),
        }
    }
    (keys, groups.into_iter().map(|(_, rows)| rows).collect())
}

/// The grouped table.
pub fn replicate_groups(table: &SweepTable, plan: &PlanRecord) -> SweepTable {
    let (keys, groups) = group_rows(table, plan);
    let done: Vec<bool> = match table.column("status").map(|c| &c.data) {
        Some(ColumnData::Text(v)) => v.iter().map(|s| s == "done").collect(),
        _ => vec![true; table.rows],
    };
    let mut columns: Vec<SweepColumn> = keys
        .iter()
        .map(|&i| {
            let c = &table.columns[i];
            let data = match &c.data {
                ColumnData::Real(v) => ColumnData::Real(groups.iter().map(|g| v[g[0]]).collect()),
                ColumnData::Text(v) => ColumnData::Text(groups.iter().map(|g| v[g[0]].clone()).collect()),
            };
            SweepColumn { data, ..c.clone() }
        })
        .collect();
    columns.push(SweepColumn {
        name: "cases".into(),
        unit: "1".into(),
        description: "cases in the group (all seeds, finished or not)".into(),
        role: ColumnRole::Label,
        data: ColumnData::Real(groups.iter().map(|g| g.len() as f64).collect()),
    });
    for column in &table.columns {
        let ColumnData::Real(values) = &column.data else { continue };
        if !matches!(column.role, ColumnRole::Metric | ColumnRole::Aggregate { .. }) {
            continue;
        }
        let summaries: Vec<ReplicateSummary> = groups
            .iter()
            .map(|g| {
                let v: Vec<f64> = g.iter().filter(|&&r| done[r]).map(|&r| values[r]).collect();
                ReplicateSummary::of(&v)
            })
            .collect();
        for (suffix, description) in STATS {
            columns.push(SweepColumn {
                name: format!("{}.{suffix}", column.name),
                unit: if suffix == "count" { "1".into() } else { column.unit.clone() },
                description: format!("{} ({description})", column.description),
                role: column.role.clone(),
                data: ColumnData::Real(summaries.iter().map(|s| stat(s, suffix)).collect()),
            });
        }
    }
    SweepTable { columns, rows: groups.len() }
}
