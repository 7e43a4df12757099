//! Cell layouts: where the biological cells (spheres) sit in the chamber, their radii and secretion rates.
//!
//! Generators (explicit list, CSV file, lattice, random sequential addition, dense random packing) live in the files beside this one;
//! all of them produce a [`Layout`] that has been checked by [`Layout::validate`] (except [`read_csv`], which
//! does not know the chamber: its caller validates).

pub mod chamber;
pub mod csv_import;
pub mod dense_packing;
pub mod error;
pub mod hard_sphere_monte_carlo;
pub mod lattice;
pub mod neighbours;
pub mod random;
pub mod region;
pub mod resolution;
pub mod statistics;
pub mod validate;

pub use chamber::ChamberBox;
pub use csv_import::read_csv;
pub use error::LayoutError;
pub use hard_sphere_monte_carlo::{relax_hard_spheres, MonteCarloInfo};
pub use lattice::lattice;
pub use random::{
    random_layout, random_sequential_addition, PackingMethod, RandomLayout, RandomPlacement, RandomTarget,
    RANDOM_CLOSE_PACKING,
};
pub use region::PlacementRegion;
pub use resolution::CellResolutionWarning;
pub use statistics::{ClosePairs, LayoutStatistics, PairDistribution};

/// One biological cell: an impermeable sphere that secretes ligand uniformly from its surface.
#[derive(Clone, Debug, PartialEq)]
pub struct Cell {
    /// Stable identifier (0-based, the row order of `cells.csv`).
    pub id: usize,
    /// Centre (m).
    pub centre: [f64; 3],
    /// Radius (m).
    pub radius: f64,
    /// Secretion rate (molecules/s) released uniformly over the surface.
    pub secretion_rate: f64,
}

/// The cells of one case.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Layout {
    pub cells: Vec<Cell>,
}

/// Length in micrometres with two decimals, for messages ("8.00 um").
pub(crate) fn micrometres(metres: f64) -> String {
    format!("{:.2} um", metres * 1e6)
}
