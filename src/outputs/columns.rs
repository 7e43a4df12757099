//! The registry of per-cell columns: name, unit, description and how each value follows from a cell of the
//! layout, its sensing and the drag on it. `cells.csv` and `/cells/*` of `fields.h5` (steady and transient),
//! `cells_timeseries.csv` (one block per output time), the `summary.json` units and `collect`'s aggregates
//! all take their columns from here, in this order (the order DESIGN.md §6 fixes for `cells.csv`).
//!
//! Adding a per-cell quantity: one entry of [`CELL_COLUMNS`] (and, when it comes from a solve, the field of
//! `CellSensing` or the solver output it reads).

use mesh::Cell;
use solver::post::decompose::CellSplit;
use solver::post::CellSensing;

use crate::io::table::Column;

/// What the per-cell values of one state (the steady state, or one output time) are computed from.
pub struct CellState<'a> {
    pub cells: &'a [Cell],
    pub sensing: &'a [CellSensing],
    /// Force of the fluid on each cell (N), of the flow in force.
    pub drag: &'a [[f64; 3]],
}

/// How a column's value follows from a cell.
#[derive(Clone, Copy)]
pub enum Source {
    /// The cell's identifier (written as an integer).
    Id,
    /// From the layout.
    Layout(fn(&Cell) -> f64),
    /// From what the cell senses.
    Sensed(fn(&CellSensing) -> f64),
    /// Component `axis` of the drag.
    Drag(usize),
}

/// One per-cell column.
#[derive(Clone, Copy)]
pub struct CellColumn {
    pub name: &'static str,
    pub unit: &'static str,
    pub description: &'static str,
    /// The description in transient runs, where the value is that of one output time (`None`: the same).
    pub at_a_time: Option<&'static str>,
    pub source: Source,
    /// Set when `collect` aggregates the column over the cells of each case: the short words that describe
    /// it in `sweep.csv` and label the sweep figures.
    pub aggregate: Option<&'static str>,
}

/// Which description a column carries.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RunKind {
    Steady,
    Transient,
}

const fn column(
    name: &'static str,
    unit: &'static str,
    description: &'static str,
    source: Source,
) -> CellColumn {
    CellColumn { name, unit, description, at_a_time: None, source, aggregate: None }
}

/// The per-cell columns of every run, in file order.
pub const CELL_COLUMNS: [CellColumn; 18] = [
    column("id", "1", "cell identifier (row order of the layout)", Source::Id),
    column("x", "m", "centre x", Source::Layout(|c| c.centre[0])),
    column("y", "m", "centre y", Source::Layout(|c| c.centre[1])),
    column("z", "m", "centre z", Source::Layout(|c| c.centre[2])),
    column("radius", "m", "cell radius", Source::Layout(|c| c.radius)),
    CellColumn {
        at_a_time: Some("ligand secreted by the cell once its secretion has started"),
        ..column("secretion_rate", "molecules/s", "ligand secreted by the cell", Source::Layout(|c| c.secretion_rate))
    },
    column(
        "mean_surface_concentration",
        "molecules/m^3",
        "area-mean ligand concentration on the cell surface",
        Source::Sensed(|s| s.mean_surface_concentration),
    ),
    CellColumn {
        aggregate: Some("ligand bound per cell"),
        ..column(
            "bound_rate",
            "molecules/s",
            "ligand bound by the cell's surface uptake",
            Source::Sensed(|s| s.bound_rate),
        )
    },
    column(
        "anisotropy_x",
        "1",
        "x of the anisotropy vector of the sensed flux (positive: richer downstream)",
        Source::Sensed(|s| s.anisotropy[0]),
    ),
    column("anisotropy_y", "1", "y of the anisotropy vector", Source::Sensed(|s| s.anisotropy[1])),
    column("anisotropy_z", "1", "z of the anisotropy vector", Source::Sensed(|s| s.anisotropy[2])),
    CellColumn {
        aggregate: Some("anisotropy component along the local flow"),
        ..column(
            "anisotropy_along_flow",
            "1",
            "anisotropy component along the local flow direction",
            Source::Sensed(|s| s.anisotropy_along_flow),
        )
    },
    CellColumn {
        at_a_time: Some(
            "(N_front - N_back)/(N_front + N_back) of the rates at this time, front = downstream hemisphere",
        ),
        ..column(
            "front_back_contrast",
            "1",
            "(N_front - N_back)/(N_front + N_back), front = downstream hemisphere",
            Source::Sensed(|s| s.front_back_contrast),
        )
    },
    CellColumn {
        at_a_time: Some(
            "Poisson standard error of the contrast over sensing.integration_time at the rates of this time, divided by its magnitude",
        ),
        aggregate: Some("counting-noise error of the direction estimate"),
        ..column(
            "direction_error",
            "1",
            "Poisson standard error of the contrast over sensing.integration_time, divided by its magnitude",
            Source::Sensed(|s| s.direction_error),
        )
    },
    CellColumn {
        at_a_time: Some("x of the force of the fluid on the cell (flow in force at this time)"),
        ..column("drag_x", "N", "x of the force of the fluid on the cell", Source::Drag(0))
    },
    column("drag_y", "N", "y of the force of the fluid on the cell", Source::Drag(1)),
    column("drag_z", "N", "z of the force of the fluid on the cell", Source::Drag(2)),
    column(
        "local_speed",
        "m/s",
        "superficial speed averaged over the fluid shell a < r < 2a around the cell",
        Source::Sensed(|s| s.local_speed),
    ),
];

impl CellColumn {
    /// The column's values for every cell of `state`.
    pub fn column(&self, state: &CellState, kind: RunKind) -> Column {
        let description = match kind {
            RunKind::Transient => self.at_a_time.unwrap_or(self.description),
            RunKind::Steady => self.description,
        };
        let real = |values: Vec<f64>| Column::real(self.name, self.unit, description, values);
        match self.source {
            Source::Id => Column::int(
                self.name,
                self.unit,
                description,
                state.cells.iter().map(|c| c.id as u64).collect(),
            ),
            Source::Layout(value) => real(state.cells.iter().map(value).collect()),
            Source::Sensed(value) => real(state.sensing.iter().map(value).collect()),
            Source::Drag(axis) => real(state.drag.iter().map(|f| f[axis]).collect()),
        }
    }
}

/// Every registered column of `state`, in file order.
pub fn cell_columns(state: &CellState, kind: RunKind) -> Vec<Column> {
    CELL_COLUMNS.iter().map(|c| c.column(state, kind)).collect()
}

/// A per-cell time that only a transient run's final `cells.csv` carries, found by the time loop.
#[derive(Clone, Copy)]
pub struct TimeColumn {
    pub name: &'static str,
    pub unit: &'static str,
    pub description: &'static str,
}

/// The times to 90% and 99% of the steady sensed rate and the time to a readable cue, in file order.
pub const TRANSIENT_TIME_COLUMNS: [TimeColumn; 3] = [
    TimeColumn {
        name: "time_to_90_percent",
        unit: "s",
        description: "first time the cell's sensed rate reached 90% of its steady value (NaN: not reached)",
    },
    TimeColumn {
        name: "time_to_99_percent",
        unit: "s",
        description: "first time the cell's sensed rate reached 99% of its steady value (NaN: not reached)",
    },
    TimeColumn {
        name: "time_to_readable",
        unit: "s",
        description: "first time after sensing.window_start from which window_direction_error stays at or below sensing.readable_error to the end (NaN: not readable at the end)",
    },
];

impl TimeColumn {
    pub fn column(&self, values: Vec<f64>) -> Column {
        Column::real(self.name, self.unit, self.description, values)
    }
}

/// `cell_pressure_drop` of `cells.csv` (after the registered columns; computed from the pressure field).
pub fn cell_pressure_drop_column(values: Vec<f64>) -> Column {
    Column::real(
        "cell_pressure_drop",
        "Pa",
        "pressure at the upstream pole minus the downstream pole along the local flow",
        values,
    )
}

/// One column of the self/neighbour split (`[sensing] decompose`), NaN for the cells not split.
#[derive(Clone, Copy)]
pub struct SplitColumn {
    pub name: &'static str,
    pub unit: &'static str,
    pub description: &'static str,
    pub value: fn(&CellSplit) -> f64,
    /// Summarised (quantiles in `summary.json`, per slab in `sensing_by_position.csv`): the scalars; the
    /// vector components are not.
    pub summarised: bool,
    /// As [`CellColumn::aggregate`].
    pub aggregate: Option<&'static str>,
}

const fn split(
    name: &'static str,
    unit: &'static str,
    description: &'static str,
    value: fn(&CellSplit) -> f64,
) -> SplitColumn {
    SplitColumn { name, unit, description, value, summarised: false, aggregate: None }
}

const fn split_summarised(
    name: &'static str,
    unit: &'static str,
    description: &'static str,
    value: fn(&CellSplit) -> f64,
) -> SplitColumn {
    SplitColumn { name, unit, description, value, summarised: true, aggregate: None }
}

fn along(v: [f64; 3], s: &CellSplit) -> f64 {
    (0..3).map(|a| v[a] * s.local_flow_direction[a]).sum()
}

/// The self/neighbour split columns, in file order (after the estimate columns of `cells.csv`, steady or
/// transient; last in a transient run's `cells_timeseries.csv`).
pub const SPLIT_COLUMNS: [SplitColumn; 12] = [
    split("anisotropy_from_self_x", "1", "x of the part of the anisotropy vector due to the cell's own secretion, over the cell's total sensed flux (from_self + from_neighbours = anisotropy); NaN if not decomposed", |s| s.anisotropy_from_self[0]),
    split("anisotropy_from_self_y", "1", "y of the anisotropy part due to the cell's own secretion", |s| s.anisotropy_from_self[1]),
    split("anisotropy_from_self_z", "1", "z of the anisotropy part due to the cell's own secretion", |s| s.anisotropy_from_self[2]),
    split("anisotropy_from_neighbours_x", "1", "x of the part of the anisotropy vector due to the other cells and the inlet, over the cell's total sensed flux", |s| s.anisotropy_from_neighbours[0]),
    split("anisotropy_from_neighbours_y", "1", "y of the anisotropy part due to the other cells and the inlet", |s| s.anisotropy_from_neighbours[1]),
    split("anisotropy_from_neighbours_z", "1", "z of the anisotropy part due to the other cells and the inlet", |s| s.anisotropy_from_neighbours[2]),
    split_summarised("anisotropy_from_self_along_flow", "1", "own part of the anisotropy along the local flow (adds to the neighbour part to give anisotropy_along_flow)", |s| along(s.anisotropy_from_self, s)),
    split_summarised("anisotropy_from_neighbours_along_flow", "1", "neighbour part of the anisotropy along the local flow", |s| along(s.anisotropy_from_neighbours, s)),
    SplitColumn {
        aggregate: Some("|own| / (|own| + |neighbour|) part of the anisotropy vector, in [0, 1]"),
        ..split_summarised("self_signal_share", "1", "|own part| / (|own part| + |neighbour part|) of the anisotropy vector, in [0, 1]: 1 isolated, 0.5 equally strong, near 0 neighbour-dominated; NaN if neither part has a direction", |s| s.self_signal_share)
    },
    split_summarised("own_field_anisotropy_along_flow", "1", "anisotropy along the local flow of the cell's own field normalised by its own sensed flux (how directional its own cloud is, not its share)", |s| s.own_field_anisotropy_along_flow),
    split_summarised("self_bound_rate", "molecules/s", "ligand bound from the cell's own secretion", |s| s.self_bound_rate),
    split_summarised("neighbour_bound_rate", "molecules/s", "ligand bound from the other cells and the inlet (total minus own)", |s| s.neighbour_bound_rate),
];

/// The split columns of a layout of `cells` cells from the split of some of them (NaN elsewhere).
pub fn split_columns(cells: usize, splits: &[CellSplit]) -> Vec<Column> {
    SPLIT_COLUMNS
        .iter()
        .map(|c| {
            let mut values = vec![f64::NAN; cells];
            for s in splits {
                values[s.cell] = (c.value)(s);
            }
            Column::real(c.name, c.unit, c.description, values)
        })
        .collect()
}

/// A per-cell column that `collect` aggregates over the cells of each case (p10, median, p90 in `sweep.csv`).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct AggregatedColumn {
    pub name: &'static str,
    pub unit: &'static str,
    /// Short words for `sweep.csv` and the sweep figures.
    pub words: &'static str,
}

/// Every aggregated column of the registry and the split, by name (the order of their `sweep.csv` columns).
pub fn aggregated_columns() -> Vec<AggregatedColumn> {
    let cells = CELL_COLUMNS
        .iter()
        .filter_map(|c| Some(AggregatedColumn { name: c.name, unit: c.unit, words: c.aggregate? }));
    let split = SPLIT_COLUMNS
        .iter()
        .filter_map(|c| Some(AggregatedColumn { name: c.name, unit: c.unit, words: c.aggregate? }));
    let mut all: Vec<AggregatedColumn> = cells.chain(split).collect();
    all.sort_by_key(|c| c.name);
    all
}

/// The registered column called `name`.
pub fn cell_column(name: &str) -> Option<&'static CellColumn> {
    CELL_COLUMNS.iter().find(|c| c.name == name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn aggregated_columns_are_registered_once_by_name() {
        let names: Vec<&str> = aggregated_columns().iter().map(|c| c.name).collect();
        assert_eq!(names, ["anisotropy_along_flow", "bound_rate", "direction_error", "self_signal_share"]);
        for c in aggregated_columns() {
            let unit = cell_column(c.name)
                .map(|r| r.unit)
                .or_else(|| SPLIT_COLUMNS.iter().find(|s| s.name == c.name).map(|s| s.unit));
            assert_eq!(unit, Some(c.unit), "{} has its registry unit", c.name);
        }
    }

    #[test]
    fn names_are_unique_and_every_source_reads_its_own_value() {
        for (i, a) in CELL_COLUMNS.iter().enumerate() {
            assert!(CELL_COLUMNS[i + 1..].iter().all(|b| b.name != a.name), "{} twice", a.name);
        }
        let cells = [Cell { id: 7, centre: [1.0, 2.0, 3.0], radius: 4.0, secretion_rate: 5.0 }];
        let sensing = [CellSensing {
            mean_surface_concentration: 6.0,
            bound_rate: 7.0,
            anisotropy: [8.0, 9.0, 10.0],
            anisotropy_along_flow: 11.0,
            front_back_contrast: 12.0,
            direction_error: 13.0,
            local_flow_direction: [0.0; 3],
            local_speed: 17.0,
        }];
        let state = CellState { cells: &cells, sensing: &sensing, drag: &[[14.0, 15.0, 16.0]] };
        let columns = cell_columns(&state, RunKind::Steady);
        let mut expected = 1.0;
        for c in &columns[1..] {
            match &c.values {
                crate::io::table::ColumnValues::Real(v) => assert_eq!(v, &[expected], "{}", c.name),
                other => panic!("{} is not real: {other:?}", c.name),
            }
            expected += 1.0;
        }
        assert_eq!(columns[0].values, crate::io::table::ColumnValues::Int(vec![7]));
        let transient = cell_columns(&state, RunKind::Transient);
        assert!(transient[13].description.contains("at the rates of this time"));
        assert_eq!(transient[16].description, columns[16].description);
    }

    #[test]
    fn split_columns_read_their_own_part_and_leave_cells_not_split_nan() {
        for c in &SPLIT_COLUMNS {
            assert!(cell_column(c.name).is_none(), "{} is also a registered column", c.name);
        }
        let split = CellSplit {
            cell: 1,
            anisotropy_from_self: [1.0, 2.0, 3.0],
            anisotropy_from_neighbours: [4.0, 5.0, 6.0],
            self_signal_share: 0.25,
            own_field_anisotropy_along_flow: 7.0,
            local_flow_direction: [0.0, 1.0, 0.0],
            self_bound_rate: 8.0,
            neighbour_bound_rate: 9.0,
            self_mean_surface_concentration: 10.0,
            iterations: 3,
        };
        let columns = split_columns(2, &[split]);
        let values: Vec<(f64, f64)> = columns
            .iter()
            .map(|c| match &c.values {
                crate::io::table::ColumnValues::Real(v) => (v[0], v[1]),
                other => panic!("{} is not real: {other:?}", c.name),
            })
            .collect();
        assert!(values.iter().all(|(not_split, _)| not_split.is_nan()));
        let split_values: Vec<f64> = values.iter().map(|v| v.1).collect();
        assert_eq!(split_values, [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 2.0, 5.0, 0.25, 7.0, 8.0, 9.0]);
    }
}
