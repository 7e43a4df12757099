//! The `sensing` object of each case's `summary.json` as `sweep.csv` columns, named by their path in
//! `summary.json`: `sensing.failed_fraction`, `sensing.direction_error.median`, and per slab by index,
//! `sensing.by_position.<k>.failed_fraction`, `sensing.by_position.<k>.quantities.anisotropy_along_flow.median`.
//! Counts of values behind a quantile (`count`) and slab indices are left out; `"inf"` reads as ∞.

use super::collect::{ColumnData, ColumnRole, SweepColumn};
use crate::sensing::statistics::json_real;

/// Leaves of the `sensing` object that are bookkeeping rather than results.
const SKIPPED_LEAVES: [&str; 2] = ["count", "index"];

/// Unit of a sensing column by its path.
fn unit_of(path: &str) -> &'static str {
    let last = path.rsplit('.').next().unwrap_or("");
    if matches!(last, "x_low" | "x_high" | "statistics_margin") {
        "m"
    } else if path.contains("bound_rate.") {
        "molecules/s"
    } else {
        "1"
    }
}

/// Every numeric leaf under `json` as (dotted path, value), in the object's key order.
fn leaves(json: &serde_json::Value, path: &str, out: &mut Vec<(String, f64)>) {
    match json {
        serde_json::Value::Object(map) => {
            for (key, value) in map {
                if !SKIPPED_LEAVES.contains(&key.as_str()) || value.is_object() {
                    leaves(value, &format!("{path}.{key}"), out);
                }
            }
        }
        serde_json::Value::Array(items) => {
            for (k, value) in items.iter().enumerate() {
                leaves(value, &format!("{path}.{k}"), out);
            }
        }
        other => out.push((path.to_string(), json_real(other))),
    }
}

/// The sensing columns of a sweep from each case's `sensing` object as JSON (`None`: not done, or a run
/// without one); the union of the cases' paths, in order of first appearance; NaN where a case lacks a path.
pub fn sensing_columns(sensing: &[Option<serde_json::Value>]) -> Vec<SweepColumn> {
    let per_case: Vec<Vec<(String, f64)>> = sensing
        .iter()
        .map(|s| {
            let mut out = Vec::new();
            if let Some(sensing) = s {
                leaves(sensing, "sensing", &mut out);
            }
            out
        })
        .collect();
    let mut names: Vec<&str> = Vec::new();
    for case in &per_case {
        for (name, _) in case {
            if !names.contains(&name.as_str()) {
                names.push(name);
            }
        }
    }
    names
        .iter()
        .map(|name| SweepColumn {
            name: name.to_string(),
            unit: unit_of(name).into(),
            description: format!("{name} of the case's summary.json"),
            role: ColumnRole::Metric,
            data: ColumnData::Real(
                per_case
                    .iter()
                    .map(|c| c.iter().find(|(n, _)| n == name).map_or(f64::NAN, |(_, v)| *v))
                    .collect(),
            ),
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn paths_units_and_missing_values() {
        let a = json!({ "failed_fraction": 0.25, "direction_error": { "median": "inf", "count": 3 },
            "by_position": [ { "index": 0, "x_low": 0.0, "failed_fraction": null,
                               "quantities": { "self_bound_rate": { "median": 2.0 } } } ] });
        let b = json!({ "failed_fraction": 0.5 });
        let columns = sensing_columns(&[Some(a), None, Some(b)]);
        let names: Vec<&str> = columns.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(
            names,
            [
                "sensing.by_position.0.failed_fraction",
                "sensing.by_position.0.quantities.self_bound_rate.median",
                "sensing.by_position.0.x_low",
                "sensing.direction_error.median",
                "sensing.failed_fraction"
            ]
        );
        let units: Vec<&str> = columns.iter().map(|c| c.unit.as_str()).collect();
        assert_eq!(units, ["1", "molecules/s", "m", "1", "1"]);
        let ColumnData::Real(median) = &columns[3].data else { panic!("real") };
        assert_eq!(median[0], f64::INFINITY);
        assert!(median[1].is_nan() && median[2].is_nan());
        let ColumnData::Real(failed) = &columns[4].data else { panic!("real") };
        assert_eq!((failed[0], failed[2]), (0.25, 0.5));
    }
}
