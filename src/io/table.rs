//! The per-cell table: one named column per sensed or derived quantity, with its unit and meaning. The same
//! table feeds `cells.csv` and the `/cells/*` datasets of `fields.h5`, so the two can never disagree.

use thiserror::Error;

/// One column of the per-cell table.
#[derive(Clone, Debug, PartialEq)]
pub struct Column {
    /// Column name as it appears in the `cells.csv` header and as the dataset name under `/cells`.
    pub name: String,
    /// SI unit string, `"1"` for dimensionless quantities.
    pub unit: String,
    /// One sentence saying what the column holds.
    pub description: String,
    pub values: ColumnValues,
}

/// The values of a column: integers (identifiers, counts) or reals.
#[derive(Clone, Debug, PartialEq)]
pub enum ColumnValues {
    Int(Vec<u64>),
    Real(Vec<f64>),
}

impl ColumnValues {
    pub fn len(&self) -> usize {
        match self {
            ColumnValues::Int(v) => v.len(),
            ColumnValues::Real(v) => v.len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

impl Column {
    /// An integer column.
    pub fn int(name: &str, unit: &str, description: &str, values: Vec<u64>) -> Self {
        Column {
            name: name.to_string(),
            unit: unit.to_string(),
            description: description.to_string(),
            values: ColumnValues::Int(values),
        }
    }

    /// A real column.
    pub fn real(name: &str, unit: &str, description: &str, values: Vec<f64>) -> Self {
        Column {
            name: name.to_string(),
            unit: unit.to_string(),
            description: description.to_string(),
            values: ColumnValues::Real(values),
        }
    }
}

/// All columns of the per-cell table, in output order; every column has one value per cell.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct CellTable {
    pub columns: Vec<Column>,
}

/// Why a table cannot be written.
#[derive(Debug, Error, PartialEq)]
pub enum TableError {
    #[error("cell table column {index} has an empty name")]
    EmptyName { index: usize },
    #[error("cell table column name {name:?} is not a plain name (it may not contain '/', ',', quotes, whitespace or control characters, nor be '.')")]
    InvalidName { name: String },
    #[error("cell table column {name:?} appears twice")]
    DuplicateName { name: String },
    #[error("cell table column {name:?} has {found} values but column {first:?} has {expected}")]
    LengthMismatch { name: String, found: usize, first: String, expected: usize },
}

impl CellTable {
    /// Number of cells (rows); 0 for a table without columns.
    pub fn rows(&self) -> usize {
        self.columns.first().map_or(0, |c| c.values.len())
    }

    /// The column called `name`, if any.
    pub fn column(&self, name: &str) -> Option<&Column> {
        self.columns.iter().find(|c| c.name == name)
    }

    /// Checks that the table can be written to both CSV and HDF5 unchanged: names are plain, unique and all
    /// columns have the same length. Returns the number of rows.
    pub fn validate(&self) -> Result<usize, TableError> {
        let rows = self.rows();
        for (index, column) in self.columns.iter().enumerate() {
            let name = &column.name;
            if name.is_empty() {
                return Err(TableError::EmptyName { index });
            }
            // Plain names keep the CSV header unquoted and are valid HDF5 link names.
            let plain = name != "."
                && !name
                    .chars()
                    .any(|c| c == '/' || c == ',' || c == '"' || c.is_whitespace() || c.is_control());
            if !plain {
                return Err(TableError::InvalidName { name: name.clone() });
            }
            if self.columns[..index].iter().any(|c| &c.name == name) {
                return Err(TableError::DuplicateName { name: name.clone() });
            }
            if column.values.len() != rows {
                return Err(TableError::LengthMismatch {
                    name: name.clone(),
                    found: column.values.len(),
                    first: self.columns[0].name.clone(),
                    expected: rows,
                });
            }
        }
        Ok(rows)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn table() -> CellTable {
        CellTable {
            columns: vec![
                Column::int("id", "1", "cell identifier", vec![0, 1, 2]),
                Column::real("radius", "m", "cell radius", vec![8e-6, 9e-6, 1e-5]),
            ],
        }
    }

    #[test]
    fn valid_table_reports_rows_and_finds_columns() {
        let t = table();
        assert_eq!(t.validate(), Ok(3));
        assert_eq!(t.column("radius").map(|c| c.unit.as_str()), Some("m"));
        assert!(t.column("drag_x").is_none());
        assert_eq!(CellTable::default().validate(), Ok(0));
    }

    #[test]
    fn ragged_duplicate_and_bad_names_are_rejected() {
        let mut t = table();
        t.columns.push(Column::real("x", "m", "", vec![1.0]));
        assert_eq!(
            t.validate(),
            Err(TableError::LengthMismatch { name: "x".into(), found: 1, first: "id".into(), expected: 3 })
        );
        let mut t = table();
        t.columns.push(Column::real("radius", "m", "", vec![1.0; 3]));
        assert_eq!(t.validate(), Err(TableError::DuplicateName { name: "radius".into() }));
        for bad in ["a/b", "a,b", "a b", "."] {
            let mut t = table();
            t.columns.push(Column::real(bad, "m", "", vec![1.0; 3]));
            assert_eq!(t.validate(), Err(TableError::InvalidName { name: bad.into() }), "{bad}");
        }
        let mut t = table();
        t.columns.push(Column::real("", "m", "", vec![1.0; 3]));
        assert_eq!(t.validate(), Err(TableError::EmptyName { index: 2 }));
    }
}
