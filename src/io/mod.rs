//! Output writers for the files of a run directory (DESIGN.md §6): `fields.h5` with its `fields.xmf`
//! sidecar, `cells.csv`, `summary.json`. Every file is written atomically (temporary file, then rename), and
//! carries its units; `fields.h5` also carries the provenance of the run.

pub mod atomic;
pub mod binary_record;
pub mod cells_csv;
pub mod field_chunks;
pub mod fields_h5;
pub mod folder_lock;
pub mod initial_field;
pub mod number_text;
pub mod output_folder;
pub mod provenance;
pub mod sensing_by_position;
pub mod summary_json;
pub mod table;
pub mod transient_h5;
pub mod xdmf;
pub mod xdmf_temporal;

pub use atomic::{with_atomic_file, write_atomic};
pub use cells_csv::write_cells_csv;
pub use fields_h5::{write_fields_h5, FieldData, FieldStorage, FieldsError, Precision, Provenance};
pub use provenance::git_revision;
pub use summary_json::write_summary_json;
pub use table::{CellTable, Column, ColumnValues, TableError};
pub use xdmf::write_fields_xmf;
