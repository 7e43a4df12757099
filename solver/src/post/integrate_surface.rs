//! Per-cell surface integrals of the solved field: what each cell senses.
//!
//! For cell i with facets f (area A_f, normal n_f out of the cell, facet concentration c_f):
//! - mean surface concentration `Σ c_f A_f / Σ A_f`;
//! - bound rate `Σ uptake_f` (molecules/s), from exactly the discrete uptake that the solve balanced;
//! - sensed flux density j_f: the bound flux density `κ c_f` (first order), the flux arriving from the fluid
//!   (absorbing), or — for a reflecting cell, which binds nothing — the surface concentration itself for the
//!   anisotropy and the Smoluchowski-equivalent sampling rate `(D/a) c_f` for counting (the rate at which a
//!   perfectly absorbing sphere of the same radius would count molecules at that concentration; an assumption
//!   of this tool, stated in the outputs' documentation);
//! - anisotropy vector `Σ j_f n_f A_f / Σ j_f A_f`, and its component along the local flow direction ê;
//! - front–back contrast `(N_front − N_back)/(N_front + N_back)` over the hemispheres split normal to ê (front =
//!   downstream, so a downstream-rich cell has a positive contrast, as the anisotropy). It is evaluated from the
//!   first angular moment, `(3/2)·(anisotropy along ê)`, which is exactly the hemisphere difference when the
//!   sensed flux varies as `1 + 3A cosθ` plus even harmonics — true to first order in Pe (shared/REFERENCES.md
//!   item H). Why not sum facets by hemisphere: each facet would fall wholly on one side, an O(h/a) error in the
//!   hemisphere areas (seen in the demo case at a/h = 4: a contrast of 0.093 beside an anisotropy of 1.2e-4)
//!   that swamps physical contrasts of 1e-3; the moment sum instead cancels the uniform part exactly, because the facet area
//!   vectors of a closed surface sum to zero;
//! - expected counts over the integration time T: `N = T Σ count_rate_f`, split `N(1 ± contrast)/2`; the
//!   direction error follows from [`super::counting_noise`].

use super::counting_noise::front_back_contrast;
use super::local_flow::shell_mean_velocity;
use crate::problem::SurfaceUptake;
use crate::transport::surface_exchange::FacetExchange;
use mesh::{EmbeddedGeometry, Layout};

/// What one cell senses. Units: SI (m, molecules/s, molecules/m^3, N, m/s).
#[derive(Clone, Debug, PartialEq)]
pub struct CellSensing {
    pub mean_surface_concentration: f64,
    pub bound_rate: f64,
    pub anisotropy: [f64; 3],
    pub anisotropy_along_flow: f64,
    pub front_back_contrast: f64,
    pub direction_error: f64,
    pub local_flow_direction: [f64; 3],
    pub local_speed: f64,
}

/// How sensing is evaluated.
#[derive(Clone, Copy, Debug)]
pub struct SensingModel {
    pub uptake: SurfaceUptake,
    pub diffusivity: f64,
    /// Integration time of the counting-noise estimate (s).
    pub integration_time: f64,
}

/// Per-cell sensing from the solved concentration `c` and the flow's face fluxes (m³/s).
pub fn cell_sensing(
    geometry: &EmbeddedGeometry,
    layout: &Layout,
    exchanges: &[FacetExchange],
    c: &[f64],
    face_flux: &[Vec<f64>; 3],
    model: &SensingModel,
) -> Vec<CellSensing> {
    let local_flow = local_flow_per_cell(geometry, layout, face_flux);
    cell_sensing_in_local_flow(geometry, layout, exchanges, c, &local_flow, model)
}

/// The shell-averaged flow around every cell (m/s), for [`cell_sensing_in_local_flow`]: a time loop whose flow
/// stays fixed computes it once.
pub fn local_flow_per_cell(
    geometry: &EmbeddedGeometry,
    layout: &Layout,
    face_flux: &[Vec<f64>; 3],
) -> Vec<[f64; 3]> {
    layout.cells.iter().map(|cell| shell_mean_velocity(geometry, face_flux, cell)).collect()
}

/// [`cell_sensing`] with the local flow of each cell given (from [`local_flow_per_cell`]).
pub fn cell_sensing_in_local_flow(
    geometry: &EmbeddedGeometry,
    layout: &Layout,
    exchanges: &[FacetExchange],
    c: &[f64],
    local_flow: &[[f64; 3]],
    model: &SensingModel,
) -> Vec<CellSensing> {
    let cells = layout.cells.len();
    // Facets are sorted by owner, but do not rely on it: gather per owner.
    let mut by_owner: Vec<Vec<usize>> = vec![Vec::new(); cells];
    for (n, facet) in geometry.facets.iter().enumerate() {
        by_owner[facet.owner].push(n);
    }
    layout
        .cells
        .iter()
        .enumerate()
        .map(|(i, cell)| {
            let u = local_flow[i];
            let speed = (u[0] * u[0] + u[1] * u[1] + u[2] * u[2]).sqrt();
            // Without flow there is no local direction: use the chamber's flow axis +x.
            let e = if speed > 0.0 { u.map(|v| v / speed) } else { [1.0, 0.0, 0.0] };

            let (mut area, mut c_area, mut bound) = (0.0, 0.0, 0.0);
            let (mut j_total, mut j_vec) = (0.0, [0.0; 3]);
            let mut counted = 0.0;
            for &n in &by_owner[i] {
                let facet = &geometry.facets[n];
                let ex = &exchanges[n];
                let cf = ex.surface_value.evaluate(c);
                let uptake = ex.uptake.evaluate(c);
                area += facet.area;
                c_area += cf * facet.area;
                bound += uptake;
                // Sensed amount per unit time through this facet, for the anisotropy and for counting.
                let (anisotropy_weight, count_rate) = match model.uptake {
                    SurfaceUptake::None => {
                        (cf * facet.area, model.diffusivity / cell.radius * cf * facet.area)
                    }
                    SurfaceUptake::FirstOrder { .. } => (uptake, uptake),
                    SurfaceUptake::Absorbing => (uptake - ex.secretion, uptake - ex.secretion),
                };
                j_total += anisotropy_weight;
                for (v, n) in j_vec.iter_mut().zip(facet.normal) {
                    *v += anisotropy_weight * n;
                }
                counted += count_rate;
            }
            let anisotropy = if j_total != 0.0 { j_vec.map(|v| v / j_total) } else { [0.0; 3] };
            let along = anisotropy[0] * e[0] + anisotropy[1] * e[1] + anisotropy[2] * e[2];
            let total = counted * model.integration_time;
            let contrast_moment = (1.5 * along).clamp(-1.0, 1.0);
            let (contrast, error) = front_back_contrast(
                0.5 * total * (1.0 + contrast_moment),
                0.5 * total * (1.0 - contrast_moment),
            );
            CellSensing {
                mean_surface_concentration: if area > 0.0 { c_area / area } else { 0.0 },
                bound_rate: bound,
                anisotropy,
                anisotropy_along_flow: along,
                front_back_contrast: contrast,
                direction_error: error,
                local_flow_direction: e,
                local_speed: speed,
            }
        })
        .collect()
}
