//! Embedded-boundary (cut-cell) geometry of the spheres on the grid.
//!
//! Sign convention: a facet normal points *out of the sphere into the fluid*.

use crate::grid::Grid;

/// The part of a sphere's surface that lies inside one grid cell, replaced by one planar facet.
#[derive(Clone, Debug, PartialEq)]
pub struct BoundaryFacet {
    /// Flat index of the grid cell that holds the facet.
    pub grid_cell: usize,
    /// Index of the owning cell in `Layout::cells`.
    pub owner: usize,
    /// Facet area (m^2).
    pub area: f64,
    /// Facet centroid (m), on or next to the sphere surface.
    pub centroid: [f64; 3],
    /// Unit normal, out of the sphere into the fluid.
    pub normal: [f64; 3],
}

/// Volume fractions, face apertures and boundary facets of all spheres on one grid.
#[derive(Clone, Debug)]
pub struct EmbeddedGeometry {
    pub grid: Grid,
    /// Periodic axes (spheres crossing a periodic face wrap around).
    pub periodic: [bool; 3],
    /// Fluid volume fraction of each grid cell, in [0, 1] (cell-centred flat index).
    pub volume_fraction: Vec<f64>,
    /// Open (fluid) fraction of each face, in [0, 1], per axis (face flat index, see `Grid::face_index`).
    pub aperture: [Vec<f64>; 3],
    /// Boundary facets, sorted by owner and then by grid cell. A grid cell may hold facets of two cells.
    pub facets: Vec<BoundaryFacet>,
}
