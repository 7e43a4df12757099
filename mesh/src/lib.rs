//! Uniform Cartesian grid, biological-cell layouts and the embedded-boundary (cut-cell) geometry of the
//! spheres that represent the cells.
//!
//! Conventions shared by every crate of the workspace:
//! - Lengths in metres (SI throughout).
//! - A *grid cell* is one control volume of the Cartesian grid; a *cell* (without "grid") is a biological
//!   cell, modelled as an impermeable sphere.
//! - Cell-centred arrays are flat `Vec<f64>` indexed `i + nx * (j + ny * k)`: the same memory order as an
//!   `ndarray` of shape `(nz, ny, nx)`, which is also the order XDMF viewers expect (x fastest).
//! - Face arrays: the x-faces sit at `x = origin_x + i h` for `i in 0..=nx`, indexed
//!   `i + (nx + 1) * (j + ny * k)`; y-faces `i + nx * (j + (ny + 1) * k)`; z-faces `i + nx * (j + ny * k)`
//!   with `k in 0..=nz`. See [`Grid::face_index`].

pub mod geometry;
pub mod grid;
pub mod layout;

pub use geometry::{BoundaryFacet, EmbeddedGeometry};
pub use grid::{Axis, BoundaryFace, Grid};
pub use layout::{
    lattice, random_sequential_addition, read_csv, Cell, CellResolutionWarning, ChamberBox, Layout,
    LayoutError, LayoutStatistics, RandomLayout, RandomTarget,
};
