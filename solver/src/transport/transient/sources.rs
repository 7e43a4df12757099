//! Secretion switched on per cell: cell i secretes from `secretion_start[i]` on.
//!
//! Every constant of a facet's exchange (released amount, the constant parts of its uptake and surface-value
//! forms) is proportional to the secretion flux density of its cell, so a cell that has not started secreting
//! is the same exchange with those constants set to zero; the linear (uptake) parts stay. Within a step the
//! switch is evaluated at the step's end tₙ₊₁ with "on for t > start": steps are cut at every start, so the
//! step that ends at a start is still off and the next one is on.

use crate::transport::surface_exchange::FacetExchange;
use mesh::EmbeddedGeometry;

/// Which cells secrete during the step that ends at `t_new`.
pub fn cells_on(secretion_start: &[f64], t_new: f64) -> Vec<bool> {
    secretion_start.iter().map(|&s| s < t_new).collect()
}

/// The facet exchanges with the cells in `on` secreting and the others silent.
pub fn switched_exchanges(
    geometry: &EmbeddedGeometry,
    exchanges: &[FacetExchange],
    on: &[bool],
) -> Vec<FacetExchange> {
    geometry
        .facets
        .iter()
        .zip(exchanges)
        .map(|(facet, ex)| {
            if on[facet.owner] {
                ex.clone()
            } else {
                let mut silent = ex.clone();
                silent.secretion = 0.0;
                silent.uptake.constant = 0.0;
                silent.surface_value.constant = 0.0;
                silent
            }
        })
        .collect()
}

/// Adds each facet's `secretion − uptake constant` (molecules/s) to the right-hand side row of its grid cell.
pub fn add_facet_sources(geometry: &EmbeddedGeometry, exchanges: &[FacetExchange], rhs: &mut [f64]) {
    for (facet, ex) in geometry.facets.iter().zip(exchanges) {
        rhs[facet.grid_cell] += ex.secretion - ex.uptake.constant;
    }
}
