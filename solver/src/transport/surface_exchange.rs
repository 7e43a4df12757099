//! Secretion and uptake at the cell surfaces.
//!
//! On the surface of cell i the flux into the fluid is `F_i − κ c_f` with `F_i` the uniform secretion flux
//! density and `c_f` the facet value. Sign convention: secretion is a source of the fluid grid cell that holds
//! the facet; uptake is a sink. `F_i = ν_i / (Σ facet areas of cell i)`, so that every cell releases exactly ν_i
//! on the discrete surface (exact conservation while the facet areas converge to 4πa² at second order).
//!
//! Facet values come from [`crate::embedded::FacetExtrapolation`], closed by the boundary condition:
//! - reflecting (κ = 0): `c_f = T(c) − (F/D)(d·n)` with T the tangential extrapolation;
//! - first order: `c_f = [T(c) − (F/D)(d·n)] / (1 − (κ/D)(d·n))`;
//! - absorbing (c_f = 0): the uptake is `D A c(x_f + h n)/h`, the value one spacing out along the normal from
//!   the least-squares gradient (first-order accurate; the secreted molecules are recaptured at once).

use crate::embedded::extrapolate_to_facet::LinearForm;
use crate::embedded::FacetStencils;
use crate::problem::SurfaceUptake;
use mesh::{EmbeddedGeometry, Layout};

/// An affine function of the cell values: `Σ w c[i] + constant`.
#[derive(Clone, Debug, Default)]
pub struct AffineForm {
    pub terms: LinearForm,
    pub constant: f64,
}

impl AffineForm {
    pub fn evaluate(&self, c: &[f64]) -> f64 {
        FacetStencils::evaluate(&self.terms, c) + self.constant
    }
}

/// The exchange of one facet with the fluid.
#[derive(Clone, Debug)]
pub struct FacetExchange {
    /// Secretion released through this facet (molecules/s).
    pub secretion: f64,
    /// Bound (taken up) through this facet (molecules/s) as a function of the cell values.
    pub uptake: AffineForm,
    /// Facet concentration (molecules/m^3) as a function of the cell values.
    pub surface_value: AffineForm,
}

/// Largest |(κ/D)(d·n)| allowed in the Robin closure: beyond it the normal offset is clipped so that the
/// closure stays well posed (happens only for κh/D ≳ 1, i.e. nearly absorbing surfaces on coarse grids).
const MAX_ROBIN_OFFSET: f64 = 0.5;

/// Builds the exchange of every facet, in the order of `geometry.facets`.
pub fn facet_exchanges(
    geometry: &EmbeddedGeometry,
    stencils: &FacetStencils,
    layout: &Layout,
    diffusivity: f64,
    uptake: SurfaceUptake,
) -> Vec<FacetExchange> {
    let h = geometry.grid.spacing;
    let mut cell_area = vec![0.0; layout.cells.len()];
    for facet in &geometry.facets {
        cell_area[facet.owner] += facet.area;
    }
    geometry
        .facets
        .iter()
        .zip(&stencils.facets)
        .map(|(facet, ex)| {
            let flux_density = if cell_area[facet.owner] > 0.0 {
                layout.cells[facet.owner].secretion_rate / cell_area[facet.owner]
            } else {
                0.0
            };
            let secretion = flux_density * facet.area;
            let dn = ex.normal_offset;
            match uptake {
                SurfaceUptake::None => {
                    let surface_value = AffineForm {
                        terms: ex.tangential.clone(),
                        constant: -flux_density / diffusivity * dn,
                    };
                    FacetExchange { secretion, uptake: AffineForm::default(), surface_value }
                }
                SurfaceUptake::FirstOrder { rate_constant } => {
                    let limit = MAX_ROBIN_OFFSET * diffusivity / rate_constant;
                    let dn = dn.min(limit);
                    let scale = 1.0 / (1.0 - rate_constant / diffusivity * dn);
                    let surface_value = AffineForm {
                        terms: ex.tangential.iter().map(|&(i, w)| (i, w * scale)).collect(),
                        constant: -scale * flux_density / diffusivity * dn,
                    };
                    let k_a = rate_constant * facet.area;
                    let uptake = AffineForm {
                        terms: surface_value.terms.iter().map(|&(i, w)| (i, w * k_a)).collect(),
                        constant: surface_value.constant * k_a,
                    };
                    FacetExchange { secretion, uptake, surface_value }
                }
                SurfaceUptake::Absorbing => {
                    // c one spacing out along the normal: c_P + g · (d + h n).
                    let n = facet.normal;
                    let [i0, j0, k0] = geometry.grid.ijk(facet.grid_cell);
                    let xp = geometry.grid.cell_centre(i0, j0, k0);
                    let reach = [0, 1, 2].map(|a| facet.centroid[a] + h * n[a] - xp[a]);
                    let mut terms: LinearForm = ex
                        .gradient
                        .iter()
                        .map(|&(i, g)| (i, g[0] * reach[0] + g[1] * reach[1] + g[2] * reach[2]))
                        .collect();
                    terms[0].1 += 1.0;
                    let conductance = diffusivity * facet.area / h;
                    let uptake_terms = terms.iter().map(|&(i, w)| (i, w * conductance)).collect();
                    // Everything secreted is recaptured at once, on top of what arrives from the fluid.
                    FacetExchange {
                        secretion,
                        uptake: AffineForm { terms: uptake_terms, constant: secretion },
                        surface_value: AffineForm::default(),
                    }
                }
            }
        })
        .collect()
}

/// Secretion released by each cell through its facets (molecules/s): equals ν_i for every cell with facets.
pub fn released_per_cell(geometry: &EmbeddedGeometry, exchanges: &[FacetExchange], cells: usize) -> Vec<f64> {
    let mut out = vec![0.0; cells];
    for (facet, ex) in geometry.facets.iter().zip(exchanges) {
        out[facet.owner] += ex.secretion;
    }
    out
}
