//! `cells.csv`: one row per biological cell, one column per [`Column`](super::table::Column) of the cell
//! table, header = the column names exactly (the contract of DESIGN.md §6 fixes them). Reals are written as
//! the shortest decimal that reads back as the same `f64`, `inf` for an infinite value (e.g. the direction
//! error of a cell that senses no contrast).

use std::path::Path;

use anyhow::Context;

use super::atomic::write_atomic;
use super::number_text::format_real;
use super::table::{CellTable, ColumnValues};

/// Writes `table` to `path` as CSV, atomically.
pub fn write_cells_csv(path: &Path, table: &CellTable) -> anyhow::Result<()> {
    let bytes = cells_csv_bytes(table)?;
    write_atomic(path, &bytes).with_context(|| format!("cannot write {}", path.display()))
}

/// The CSV text of `table` (Unix line ends).
pub fn cells_csv_bytes(table: &CellTable) -> anyhow::Result<Vec<u8>> {
    let rows = table.validate()?;
    let mut writer =
        csv::WriterBuilder::new().terminator(csv::Terminator::Any(b'\n')).from_writer(Vec::new());
    writer.write_record(table.columns.iter().map(|c| c.name.as_str()))?;
    let mut record: Vec<String> = Vec::with_capacity(table.columns.len());
    for row in 0..rows {
        record.clear();
        record.extend(table.columns.iter().map(|c| match &c.values {
            ColumnValues::Int(v) => v[row].to_string(),
            ColumnValues::Real(v) => format_real(v[row]),
        }));
        writer.write_record(&record)?;
    }
    writer.into_inner().map_err(|e| anyhow::anyhow!("cannot finish the cells.csv text: {}", e.error()))
}

#[cfg(test)]
mod tests {
    use super::super::table::Column;
    use super::*;

    fn table() -> CellTable {
        CellTable {
            columns: vec![
                Column::int("id", "1", "cell identifier", vec![0, 1, 2, u64::MAX]),
                Column::real("x", "m", "centre x", vec![1.0 / 3.0, 1e-4, -2.5e-5, 0.0]),
                Column::real(
                    "secretion_rate",
                    "1/s",
                    "molecules per second",
                    vec![2000.0 / 3600.0, 0.1, 1e300, 5e-324],
                ),
                Column::real("direction_error", "1", "relative error", vec![f64::INFINITY, 0.3, 1.0, 7.0]),
            ],
        }
    }

    #[test]
    fn round_trip_through_csv_reader_is_exact() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("cells.csv");
        let t = table();
        write_cells_csv(&path, &t).unwrap();

        let mut reader = csv::Reader::from_path(&path).unwrap();
        let header: Vec<String> = reader.headers().unwrap().iter().map(str::to_string).collect();
        assert_eq!(header, ["id", "x", "secretion_rate", "direction_error"]);
        let records: Vec<csv::StringRecord> = reader.records().map(|r| r.unwrap()).collect();
        assert_eq!(records.len(), t.rows());
        for (col, column) in t.columns.iter().enumerate() {
            for (row, record) in records.iter().enumerate() {
                let text = &record[col];
                match &column.values {
                    ColumnValues::Int(v) => assert_eq!(text.parse::<u64>().unwrap(), v[row]),
                    ColumnValues::Real(v) => {
                        let back: f64 = text.parse().unwrap();
                        assert_eq!(back.to_bits(), v[row].to_bits(), "{} row {row}: {text}", column.name)
                    }
                }
            }
        }
        assert_eq!(&records[0][3], "inf");
    }

    #[test]
    fn empty_layout_writes_header_only() {
        let t = CellTable {
            columns: vec![Column::int("id", "1", "", vec![]), Column::real("x", "m", "", vec![])],
        };
        let text = String::from_utf8(cells_csv_bytes(&t).unwrap()).unwrap();
        assert_eq!(text, "id,x\n");
    }

    #[test]
    fn ragged_table_writes_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("cells.csv");
        let mut t = table();
        t.columns.push(Column::real("y", "m", "", vec![1.0]));
        let err = write_cells_csv(&path, &t).unwrap_err();
        assert!(err.to_string().contains("\"y\""), "{err}");
        assert!(!path.exists());
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }
}
