//! Pressure drop across each cell along the local flow: `p(upstream pole) − p(downstream pole)`.
//!
//! The local flow direction is the shell-averaged velocity around the cell (as for the sensing outputs); the
//! upstream and downstream poles are the facets whose normals point most against and most along it, and the
//! pressure there is extrapolated from the grid cells to the facet centroid (second order, tangential least
//! squares). "Front" means downstream everywhere in the outputs (front–back contrast, window counts), so this
//! quantity is named by the flow's sides instead.

use super::local_flow::shell_mean_velocity;
use crate::embedded::FacetStencils;
use mesh::{EmbeddedGeometry, Layout};

/// `p_upstream − p_downstream` per cell (Pa), the local flow from the face fluxes (m³/s); zero where there is
/// no local flow or no facet.
pub fn cell_pressure_drop(
    geometry: &EmbeddedGeometry,
    stencils: &FacetStencils,
    layout: &Layout,
    face_flux: &[Vec<f64>; 3],
    pressure: &[f64],
) -> Vec<f64> {
    let mut start = 0;
    layout
        .cells
        .iter()
        .enumerate()
        .map(|(owner, cell)| {
            let facets = geometry.facets_of(owner);
            let first = start + geometry.facets[start..].partition_point(|f| f.owner < owner);
            start = first + facets.len();
            let flow = shell_mean_velocity(geometry, face_flux, cell);
            let speed = flow.iter().map(|v| v * v).sum::<f64>().sqrt();
            if speed == 0.0 || facets.is_empty() {
                return 0.0;
            }
            let along = |n: &[f64; 3]| (0..3).map(|a| n[a] * flow[a]).sum::<f64>() / speed;
            let (mut upstream, mut downstream) = ((f64::INFINITY, 0usize), (f64::NEG_INFINITY, 0usize));
            for (m, f) in facets.iter().enumerate() {
                let c = along(&f.normal);
                if c < upstream.0 {
                    upstream = (c, m);
                }
                if c > downstream.0 {
                    downstream = (c, m);
                }
            }
            let value = |m: usize| FacetStencils::evaluate(&stencils.facets[first + m].tangential, pressure);
            value(upstream.1) - value(downstream.1)
        })
        .collect()
}
