//! The per-cell values of a transient run at one output time: the steady run's sensing columns evaluated on
//! the field of that time, and what each cell has counted since `[sensing] window_start` (cumulative bound,
//! front and back counts, and the front–back contrast and direction error of those cumulative counts).
//!
//! During the run only the time-dependent values are kept ([`SENSED`], one record per output time); the
//! static columns (position, radius, secretion, drag of the flow in force) are added when the tables are
//! assembled, so the record stays independent of the flow solution.

use crate::case::Case;
use crate::io::table::Column;
use solver::solve_transient::TransientOutput;

/// The time-dependent per-cell columns kept at every output time: (name, unit, description).
pub const SENSED: [(&str, &str, &str); 14] = [
    ("mean_surface_concentration", "molecules/m^3", "area-mean ligand concentration on the cell surface"),
    ("bound_rate", "molecules/s", "ligand bound by the cell's surface uptake"),
    ("anisotropy_x", "1", "x of the anisotropy vector of the sensed flux (positive: richer downstream)"),
    ("anisotropy_y", "1", "y of the anisotropy vector"),
    ("anisotropy_z", "1", "z of the anisotropy vector"),
    ("anisotropy_along_flow", "1", "anisotropy component along the local flow direction"),
    ("front_back_contrast", "1", "(N_front - N_back)/(N_front + N_back) of the rates at this time, front = downstream hemisphere"),
    ("direction_error", "1", "Poisson standard error of the contrast over sensing.integration_time at the rates of this time, divided by its magnitude"),
    ("local_speed", "m/s", "superficial speed averaged over the fluid shell a < r < 2a around the cell"),
    ("window_bound_count", "molecules", "molecules bound since sensing.window_start (trapezoid rule over the steps)"),
    ("window_front_count", "molecules", "expected counts on the downstream hemisphere since sensing.window_start"),
    ("window_back_count", "molecules", "expected counts on the upstream hemisphere since sensing.window_start"),
    ("window_front_back_contrast", "1", "front-back contrast of the counts since sensing.window_start"),
    ("window_direction_error", "1", "Poisson standard error of the window contrast, from the cumulative counts, divided by its magnitude"),
];

/// Index of the first window column in [`SENSED`] (the columns from there on go after the contract columns).
pub const FIRST_WINDOW: usize = 9;

/// The [`SENSED`] values of one output time, column after column (`SENSED.len() × cells`).
pub fn sensed_values(output: &TransientOutput) -> Vec<f64> {
    let s = output.sensing;
    let counts = output.counts;
    let window = counts.contrast_and_error();
    let mut values = Vec::with_capacity(SENSED.len() * s.len());
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

/// Static and per-time columns of one output time, in the order of the steady `cells.csv` contract
/// (`id … local_speed`), followed by `secretion_start` and the window columns.
pub fn time_columns(case: &Case, sensed: &[f64], drag: &[[f64; 3]], secretion_start: &[f64]) -> Vec<Column> {
    let cells = &case.layout.cells;
    let n = cells.len();
    let column = |k: usize| -> Column {
        let (name, unit, description) = SENSED[k];
        Column::real(name, unit, description, sensed[k * n..(k + 1) * n].to_vec())
    };
    let real = Column::real;
    let mut columns = vec![
        Column::int(
            "id",
            "1",
            "cell identifier (row order of the layout)",
            cells.iter().map(|c| c.id as u64).collect(),
        ),
        real("x", "m", "centre x", cells.iter().map(|c| c.centre[0]).collect()),
        real("y", "m", "centre y", cells.iter().map(|c| c.centre[1]).collect()),
        real("z", "m", "centre z", cells.iter().map(|c| c.centre[2]).collect()),
        real("radius", "m", "cell radius", cells.iter().map(|c| c.radius).collect()),
        real(
            "secretion_rate",
            "molecules/s",
            "ligand secreted by the cell once its secretion has started",
            cells.iter().map(|c| c.secretion_rate).collect(),
        ),
    ];
    columns.extend((0..8).map(column));
    columns.push(real(
        "drag_x",
        "N",
        "x of the force of the fluid on the cell (flow in force at this time)",
        drag.iter().map(|f| f[0]).collect(),
    ));
    columns.push(real(
        "drag_y",
        "N",
        "y of the force of the fluid on the cell",
        drag.iter().map(|f| f[1]).collect(),
    ));
    columns.push(real(
        "drag_z",
        "N",
        "z of the force of the fluid on the cell",
        drag.iter().map(|f| f[2]).collect(),
    ));
    columns.push(column(8));
    columns.push(real(
        "secretion_start",
        "s",
        "time at which the cell starts secreting",
        secretion_start.to_vec(),
    ));
    columns.extend((FIRST_WINDOW..SENSED.len()).map(column));
    columns
}

/// Number of leading columns of [`time_columns`] that are the `cells.csv` contract columns (`id … local_speed`).
pub const CONTRACT_COLUMNS: usize = 18;

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn contract_columns_come_first_in_order() {
        let names: Vec<&str> = SENSED[..FIRST_WINDOW].iter().map(|c| c.0).collect();
        assert_eq!(names.last(), Some(&"local_speed"));
        assert!(SENSED[FIRST_WINDOW].0.starts_with("window_"));
    }
}
