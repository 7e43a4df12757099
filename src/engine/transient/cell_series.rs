//! The per-cell values of a transient run at one output time: the steady run's sensing columns evaluated on
//! the field of that time, and what each cell has counted since `[sensing] window_start` (cumulative bound,
//! front and back counts, and the front–back contrast and direction error of those cumulative counts).
//!
//! During the run only the time-dependent values are kept ([`sensed_values`], one record per output time); the
//! static columns (position, radius, secretion, drag of the flow in force) are added when the tables are
//! assembled, so the record stays independent of the flow solution.

use crate::case::Case;
use crate::io::table::Column;
use crate::outputs::columns::{cell_columns, CellState, RunKind};
use solver::post::decompose::CellSplit;
use solver::post::CellSensing;
use solver::solve_transient::TransientOutput;

/// Values of [`CellSensing`] kept per cell at every output time, in the order [`sensing_of`] reads them:
/// mean surface concentration, bound rate, anisotropy x, y, z, along the flow, front–back contrast, direction
/// error, local speed.
const SENSING_VALUES: usize = 9;

/// The window columns kept per cell at every output time after the sensing values: (name, unit, description).
pub const WINDOW: [(&str, &str, &str); 5] = [
    (
        "window_bound_count",
        "molecules",
        "molecules bound since sensing.window_start (trapezoid rule over the steps)",
    ),
    (
        "window_front_count",
        "molecules",
        "expected counts on the downstream hemisphere since sensing.window_start",
    ),
    (
        "window_back_count",
        "molecules",
        "expected counts on the upstream hemisphere since sensing.window_start",
    ),
    ("window_front_back_contrast", "1", "front-back contrast of the counts since sensing.window_start"),
    (
        "window_direction_error",
        "1",
        "Poisson standard error of the window contrast, from the cumulative counts, divided by its magnitude",
    ),
];

/// Values per cell in a restart record of one output time.
pub const RECORD_VALUES: usize = SENSING_VALUES + WINDOW.len();

/// The record values of one output time, value after value (`RECORD_VALUES × cells`).
pub fn sensed_values(output: &TransientOutput) -> Vec<f64> {
    let s = output.sensing;
    let counts = output.counts;
    let window = counts.contrast_and_error();
    let mut values = Vec::with_capacity(RECORD_VALUES * s.len());
    values.extend(s.iter().map(|c| c.mean_surface_concentration));
    values.extend(s.iter().map(|c| c.bound_rate));
    for axis in 0..3 {
        values.extend(s.iter().map(|c| c.anisotropy[axis]));
    }
    values.extend(s.iter().map(|c| c.anisotropy_along_flow));
    values.extend(s.iter().map(|c| c.front_back_contrast));
    values.extend(s.iter().map(|c| c.direction_error));
    values.extend(s.iter().map(|c| c.local_speed));
    values.extend_from_slice(&counts.bound);
    values.extend_from_slice(&counts.front);
    values.extend_from_slice(&counts.back);
    values.extend(window.iter().map(|w| w.0));
    values.extend(window.iter().map(|w| w.1));
    values
}

/// Per-cell sensing rebuilt from the record values of one output time (the local flow direction is not kept).
pub fn sensing_of(sensed: &[f64], cells: usize) -> Vec<CellSensing> {
    let v = |k: usize, i: usize| sensed[k * cells + i];
    (0..cells)
        .map(|i| CellSensing {
            mean_surface_concentration: v(0, i),
            bound_rate: v(1, i),
            anisotropy: [v(2, i), v(3, i), v(4, i)],
            anisotropy_along_flow: v(5, i),
            front_back_contrast: v(6, i),
            direction_error: v(7, i),
            local_flow_direction: [0.0; 3],
            local_speed: v(8, i),
        })
        .collect()
}

/// The registered per-cell columns of one output time (`crate::outputs::columns`), followed by
/// `secretion_start` and the window columns.
pub fn time_columns(case: &Case, sensed: &[f64], drag: &[[f64; 3]], secretion_start: &[f64]) -> Vec<Column> {
    let cells = &case.layout.cells;
    let n = cells.len();
    let sensing = sensing_of(sensed, n);
    let mut columns = cell_columns(&CellState { cells, sensing: &sensing, drag }, RunKind::Transient);
    columns.push(Column::real(
        "secretion_start",
        "s",
        "time at which the cell starts secreting",
        secretion_start.to_vec(),
    ));
    columns.extend(WINDOW.iter().enumerate().map(|(w, (name, unit, description))| {
        let k = SENSING_VALUES + w;
        Column::real(name, unit, description, sensed[k * n..(k + 1) * n].to_vec())
    }));
    columns
}

/// Values of one cell's self/neighbour split in a restart record, in the order [`split_values`] writes them.
pub const SPLIT_VALUES: usize = 16;

/// The restart values of the splits of one output time (`SPLIT_VALUES` per split cell): cell, own and
/// neighbour parts, share, own-field anisotropy, local flow direction, own and neighbour bound rates, own mean
/// surface concentration, iterations.
pub fn split_values(splits: &[CellSplit]) -> Vec<f64> {
    let mut values = Vec::with_capacity(SPLIT_VALUES * splits.len());
    for s in splits {
        values.push(s.cell as f64);
        values.extend(s.anisotropy_from_self);
        values.extend(s.anisotropy_from_neighbours);
        values.extend([s.self_signal_share, s.own_field_anisotropy_along_flow]);
        values.extend(s.local_flow_direction);
        values.extend([s.self_bound_rate, s.neighbour_bound_rate, s.self_mean_surface_concentration]);
        values.push(s.iterations as f64);
    }
    values
}

/// The splits [`split_values`] wrote; `None` when the values do not fit `cells` cells.
pub fn splits_of(values: &[f64], cells: usize) -> Option<Vec<CellSplit>> {
    if values.len() % SPLIT_VALUES != 0 {
        return None;
    }
    let whole =
        |v: f64, below: usize| (v >= 0.0 && v.fract() == 0.0 && v < below as f64).then_some(v as usize);
    values
        .chunks_exact(SPLIT_VALUES)
        .map(|v| {
            Some(CellSplit {
                cell: whole(v[0], cells)?,
                anisotropy_from_self: [v[1], v[2], v[3]],
                anisotropy_from_neighbours: [v[4], v[5], v[6]],
                self_signal_share: v[7],
                own_field_anisotropy_along_flow: v[8],
                local_flow_direction: [v[9], v[10], v[11]],
                self_bound_rate: v[12],
                neighbour_bound_rate: v[13],
                self_mean_surface_concentration: v[14],
                iterations: whole(v[15], usize::MAX)?,
            })
        })
        .collect()
}

/// Number of leading columns of [`time_columns`] that are the registered columns (`id … local_speed`).
pub const CONTRACT_COLUMNS: usize = crate::outputs::columns::CELL_COLUMNS.len();

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_record_reads_back_into_the_sensing_it_was_written_from() {
        let sensed: Vec<f64> = (0..RECORD_VALUES * 2).map(|i| i as f64).collect();
        let s = sensing_of(&sensed, 2);
        assert_eq!(s[1].mean_surface_concentration, 1.0);
        assert_eq!(s[0].anisotropy, [4.0, 6.0, 8.0]);
        assert_eq!(s[1].local_speed, 17.0);
    }

    #[test]
    fn split_values_read_back_into_the_splits() {
        let split = CellSplit {
            cell: 3,
            anisotropy_from_self: [0.1, -0.2, 0.3],
            anisotropy_from_neighbours: [0.01, 0.02, -0.03],
            self_signal_share: 0.9,
            own_field_anisotropy_along_flow: 0.4,
            local_flow_direction: [1.0, 0.0, 0.0],
            self_bound_rate: 12.5,
            neighbour_bound_rate: 1.5,
            self_mean_surface_concentration: 3e15,
            iterations: 417,
        };
        let values = split_values(std::slice::from_ref(&split));
        assert_eq!(values.len(), SPLIT_VALUES);
        assert_eq!(splits_of(&values, 4), Some(vec![split]));
        assert_eq!(splits_of(&values, 3), None, "cell 3 is outside a layout of 3 cells");
        assert_eq!(splits_of(&values[1..], 4), None);
    }
}
