//! The run's sensing statistics (`summary.json` → `sensing`, `sensing_by_position.csv`) from its per-cell
//! table, the same for steady and transient runs.

use std::path::Path;

use anyhow::Result;

use crate::case::Case;
use crate::io::sensing_by_position::write_sensing_by_position;
use crate::io::{CellTable, ColumnValues};
use crate::outputs::columns::SPLIT_COLUMNS;
use crate::outputs::RunSummary;
use crate::sensing::statistics::{sensing_statistics, CellValues, SensingStatistics, StatisticsParams};

/// File name in the run folder.
pub const SENSING_BY_POSITION: &str = "sensing_by_position.csv";

/// Per-cell quantities summarised per slab besides the direction error; the self/neighbour ones only where
/// the split was computed for some cell.
const SLAB_QUANTITIES: [&str; 1] = ["anisotropy_along_flow"];

fn real<'a>(table: &'a CellTable, name: &str) -> Option<&'a [f64]> {
    match &table.column(name)?.values {
        ColumnValues::Real(v) => Some(v),
        ColumnValues::Int(_) => None,
    }
}

/// The statistics of the run whose per-cell table is `table`.
pub fn run_statistics(case: &Case, table: &CellTable) -> SensingStatistics {
    let empty: &[f64] = &[];
    let quantities = SLAB_QUANTITIES
        .iter()
        .chain(SPLIT_COLUMNS.iter().filter(|c| c.summarised).map(|c| &c.name))
        .filter_map(|name| real(table, name).map(|v| (*name, v)))
        .filter(|(_, v)| v.iter().any(|x| !x.is_nan()))
        .collect();
    let cells = CellValues {
        x: real(table, "x").unwrap_or(empty),
        direction_error: real(table, "direction_error").unwrap_or(empty),
        estimate_direction_error: real(table, "estimate_direction_error"),
        time_to_readable: real(table, "time_to_readable"),
        quantities,
    };
    let params = StatisticsParams {
        readable_error: case.sensing.readable_error,
        position_bins: case.sensing.position_bins,
        margin: case.sensing.statistics_margin,
    };
    let x0 = case.grid.origin[0];
    sensing_statistics(&cells, [x0, x0 + case.chamber_size[0]], &params)
}

/// Writes `sensing_by_position.csv` into `out_dir` from the statistics in `summary`.
pub fn write_sensing_by_position_of(summary: &RunSummary, table: &CellTable, out_dir: &Path) -> Result<()> {
    let Some(stats) = &summary.sensing else { return Ok(()) };
    let unit = |name: &str| table.column(name).map_or_else(|| "1".to_string(), |c| c.unit.clone());
    write_sensing_by_position(&out_dir.join(SENSING_BY_POSITION), stats, &unit)
}
