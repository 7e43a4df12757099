//! Pressure force on each cell: `F_i = −∮ p n dS` over its facets (n out of the cell), with the facet pressure
//! extrapolated tangentially (second order) from the grid-cell values.

use crate::embedded::FacetStencils;
use mesh::EmbeddedGeometry;

/// Sums `−p_f n A` over the facets of every cell (N).
pub fn pressure_force(
    geometry: &EmbeddedGeometry,
    stencils: &FacetStencils,
    pressure: &[f64],
    cells: usize,
) -> Vec<[f64; 3]> {
    let mut force = vec![[0.0; 3]; cells];
    for (facet, ex) in geometry.facets.iter().zip(&stencils.facets) {
        let p = FacetStencils::evaluate(&ex.tangential, pressure);
        for (f, n) in force[facet.owner].iter_mut().zip(facet.normal) {
            *f -= p * n * facet.area;
        }
    }
    force
}
