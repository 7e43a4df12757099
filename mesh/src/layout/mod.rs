//! Cell layouts: where the biological cells (spheres) sit in the chamber, their radii and secretion rates.
//!
//! Generators (explicit list, CSV file, lattice, random sequential addition) live in the files beside this one;
//! all of them produce a [`Layout`] that has been checked by [`Layout::validate`].

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
