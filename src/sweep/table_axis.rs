//! An axis whose values are whole TOML tables, such as `cells.uptake` given as
//! `[{ model = "none" }, { model = "first_order", rate_constant = "1e-6 m/s" }]`: each value replaces the whole
//! table of the base case, so keys that belong to one choice only (a rate constant) never reach another.
//!
//! In `sweep.csv` such an axis is one column per key of its tables, `<axis key>.<table key>`: numbers in SI
//! (NaN where a table lacks the key), text otherwise (empty where absent). All of them are parameters of the
//! same axis, so replicate groups and figure series keep tables with different values apart.

use super::axis::{si_unit_label, AxisValue};
use super::collect::{ColumnData, ColumnRole, SweepColumn, SweepTable};

/// The table an axis value's text stands for, when it is one.
pub fn table_value(text: &str) -> Option<toml::Table> {
    let parsed: toml::Table = toml::from_str(&format!("value = {text}")).ok()?;
    match parsed.get("value")? {
        toml::Value::Table(table) => Some(table.clone()),
        _ => None,
    }
}

/// The columns of axis number `axis` (key `key`) whose values, as written, are `texts`; `None` unless every
/// value is a table.
pub fn table_axis_columns(key: &str, axis: usize, texts: &[&str]) -> Option<Vec<SweepColumn>> {
    let tables: Vec<toml::Table> = texts.iter().map(|t| table_value(t)).collect::<Option<_>>()?;
    let mut names: Vec<&String> = Vec::new();
    for name in tables.iter().flat_map(|t| t.keys()) {
        if !names.contains(&name) {
            names.push(name);
        }
    }
    let columns = names
        .into_iter()
        .map(|name| {
            let values: Vec<Option<AxisValue>> =
                tables.iter().map(|t| t.get(name).and_then(|v| AxisValue::from_toml(v, None).ok())).collect();
            let dimensions: Vec<_> = values.iter().flatten().map(|v| v.si.and(v.dimension)).collect();
            let quantity =
                dimensions.first().copied().flatten().filter(|d| dimensions.iter().all(|e| *e == Some(*d)));
            let (unit, data) = match quantity {
                Some(d) => (
                    si_unit_label(d),
                    ColumnData::Real(
                        values.iter().map(|v| v.as_ref().and_then(|v| v.si).unwrap_or(f64::NAN)).collect(),
                    ),
                ),
                None => (
                    String::new(),
                    ColumnData::Text(
                        values
                            .iter()
                            .map(|v| {
                                v.as_ref().map(|v| v.text.trim_matches('"').to_string()).unwrap_or_default()
                            })
                            .collect(),
                    ),
                ),
            };
            SweepColumn {
                name: format!("{key}.{name}"),
                unit,
                description: format!(
                    "{name} of the swept table {key} (SI; empty or NaN where that table has none)"
                ),
                role: ColumnRole::Parameter { axis },
                data,
            }
        })
        .collect();
    Some(columns)
}

/// One category label per row for axis number `axis` from its table columns ("first_order, 1e-6 m s^-1"), for
/// the figures; `None` when the axis has no such columns.
pub fn table_axis_labels(table: &SweepTable, axis: usize) -> Option<Vec<String>> {
    let columns: Vec<&SweepColumn> =
        table.columns.iter().filter(|c| c.role == ColumnRole::Parameter { axis }).collect();
    if columns.is_empty() {
        return None;
    }
    let labels = (0..table.rows)
        .map(|row| {
            columns
                .iter()
                .filter_map(|c| match &c.data {
                    ColumnData::Real(v) if v[row].is_nan() => None,
                    ColumnData::Real(v) => {
                        Some(format!("{} {}", crate::io::number_text::format_real(v[row]), c.unit))
                    }
                    ColumnData::Text(v) if v[row].is_empty() => None,
                    ColumnData::Text(v) => Some(v[row].clone()),
                })
                .collect::<Vec<_>>()
                .join(", ")
        })
        .collect();
    Some(labels)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn uptake_tables_become_a_model_and_a_rate_column() {
        let texts = [
            r#"{ model = "none" }"#,
            r#"{ model = "first_order", rate_constant = "1e-6 m/s" }"#,
            r#"{ model = "first_order", rate_constant = "1e-5 m/s" }"#,
        ];
        let columns = table_axis_columns("cells.uptake", 0, &texts).expect("tables");
        assert_eq!(columns.len(), 2);
        assert_eq!(columns[0].name, "cells.uptake.model");
        assert_eq!(
            columns[0].data,
            ColumnData::Text(vec!["none".into(), "first_order".into(), "first_order".into()])
        );
        assert_eq!(columns[1].name, "cells.uptake.rate_constant");
        assert_eq!(columns[1].unit, "m s^-1");
        match &columns[1].data {
            ColumnData::Real(v) => assert!(v[0].is_nan() && v[1] == 1e-6 && v[2] == 1e-5, "{v:?}"),
            other => panic!("{other:?}"),
        }
        let table = SweepTable { columns, rows: 3 };
        assert_eq!(
            table_axis_labels(&table, 0).expect("labels"),
            ["none", "first_order, 1e-6 m s^-1", "first_order, 1e-5 m s^-1"]
        );
        assert_eq!(table_axis_labels(&table, 1), None);
    }

    #[test]
    fn plain_values_are_not_table_axes() {
        assert!(table_axis_columns("flow.mean_velocity", 0, &["\"1 um/s\"", "2"]).is_none());
        assert!(table_axis_columns("cells.uptake", 0, &[r#"{ model = "none" }"#, "\"absorbing\""]).is_none());
    }
}
