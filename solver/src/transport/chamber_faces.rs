//! Ligand conditions on the six chamber faces. Each boundary grid face contributes an outward flux that is
//! affine in the value of its grid cell: `outflow = coefficient · c_P − inflow_constant` (molecules/s, positive
//! out of the chamber). The coefficient goes on the diagonal, the constant on the right-hand side.
//!
//! - inlet (Dirichlet c_in on the face): `Q_out c_in + (2 D A/h)(c_P − c_in)` — advective in-flux of c_in plus the
//!   diffusive flux over the half spacing;
//! - outlet: zero diffusive flux, advective outflow `Q_out c_P`;
//! - wall and symmetry: nothing crosses;
//! - periodic: coupled inside the operator, nothing here;
//! - far field: the strength-free asymptotic Robin condition of point sources in a uniform stream U ê_x
//!   (Rosenthal 1946; Carslaw & Jaeger 1959 §10.7 [memory]): `∂c/∂n = β c` with
//!   `β = (U/2D) ê_x·n − (1/r + γ) r̂·n`, `γ = √(U²/4D² + k/D)`, r from the secretion-weighted centroid of the
//!   cells. The face value is `c_f = c_P/(1 − β h/2)`, and the outflow `(Q_out − D A β) c_f`.

use crate::problem::{ChamberBoundaries, ChamberFace, LigandParameters};
use mesh::{Axis, EmbeddedGeometry, Layout};

/// The outward flux through one boundary grid face.
#[derive(Clone, Copy, Debug)]
pub struct BoundaryExchange {
    pub grid_cell: usize,
    pub coefficient: f64,
    pub inflow_constant: f64,
}

impl BoundaryExchange {
    pub fn outflow(&self, c: &[f64]) -> f64 {
        self.coefficient * c[self.grid_cell] - self.inflow_constant
    }
}

/// Point from which far-field distances are measured: the secretion-weighted centroid of the cells, or the
/// chamber centre when nothing is secreted.
pub fn source_centroid(geometry: &EmbeddedGeometry, layout: &Layout) -> [f64; 3] {
    let total: f64 = layout.cells.iter().map(|c| c.secretion_rate).sum();
    if total > 0.0 {
        let mut x = [0.0; 3];
        for cell in &layout.cells {
            for (a, xa) in x.iter_mut().enumerate() {
                *xa += cell.secretion_rate * cell.centre[a] / total;
            }
        }
        x
    } else {
        let g = &geometry.grid;
        [0, 1, 2].map(|a| g.origin[a] + 0.5 * g.shape[a] as f64 * g.spacing)
    }
}

/// All boundary-face exchanges of the chamber.
pub fn boundary_exchanges(
    geometry: &EmbeddedGeometry,
    layout: &Layout,
    boundaries: &ChamberBoundaries,
    ligand: &LigandParameters,
    face_flux: &[Vec<f64>; 3],
    far_field_speed: f64,
) -> Vec<BoundaryExchange> {
    let grid = &geometry.grid;
    let h = grid.spacing;
    let d = ligand.diffusivity;
    let centroid = source_centroid(geometry, layout);
    let gamma = (far_field_speed.powi(2) / (4.0 * d * d) + ligand.decay_rate / d).sqrt();
    let mut out = Vec::new();
    for axis in Axis::ALL {
        let a = axis.index();
        for side in 0..2 {
            let kind = boundaries.faces[a][side];
            if matches!(kind, ChamberFace::Wall | ChamberFace::Symmetry | ChamberFace::Periodic) {
                continue;
            }
            let outward = if side == 0 { -1.0 } else { 1.0 };
            for face in grid.boundary_faces(axis, side) {
                let area = geometry.aperture[a][face.face] * h * h;
                if area == 0.0 {
                    continue;
                }
                let grid_cell = face.grid_cell;
                let q_out = outward * face_flux[a][face.face];
                let exchange = match kind {
                    ChamberFace::Inlet => {
                        let g = 2.0 * d * area / h;
                        BoundaryExchange {
                            grid_cell,
                            coefficient: g,
                            inflow_constant: (g - q_out) * ligand.inlet_concentration,
                        }
                    }
                    ChamberFace::Outlet => {
                        BoundaryExchange { grid_cell, coefficient: q_out, inflow_constant: 0.0 }
                    }
                    ChamberFace::FarField => {
                        let rvec = [0, 1, 2].map(|m| face.centre[m] - centroid[m]);
                        let r = (rvec[0].powi(2) + rvec[1].powi(2) + rvec[2].powi(2)).sqrt().max(h);
                        let r_dot_n = outward * rvec[a] / r;
                        let ex_dot_n = if a == 0 { outward } else { 0.0 };
                        let beta = far_field_speed / (2.0 * d) * ex_dot_n - (1.0 / r + gamma) * r_dot_n;
                        // Guard the face extrapolation where β h/2 nears 1 (cell Péclet number ≳ 4 on an outflow face).
                        let to_face = 1.0 / (1.0 - 0.5 * beta * h).max(0.25);
                        BoundaryExchange {
                            grid_cell,
                            coefficient: (q_out - d * area * beta) * to_face,
                            inflow_constant: 0.0,
                        }
                    }
                    ChamberFace::Wall | ChamberFace::Symmetry | ChamberFace::Periodic => continue,
                };
                out.push(exchange);
            }
        }
    }
    out
}
