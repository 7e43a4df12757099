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
//!   (Rosenthal 1946; Carslaw & Jaeger 1959 §10.7 [memory]): `∂c/∂n = β c`, β the log-gradient of the
//!   superposed point-source fields of the cells weighted by their secretion rates (`far_field_sources.rs`;
//!   with one source, or `FarFieldSources::Centroid`, `β = (U/2D) ê_x·n − (1/r + γ) r̂·n`,
//!   `γ = √(U²/4D² + k/D)`, as in DESIGN.md §4). The face value is `c_f = c_P/(1 − β h/2)`, and the outflow
//!   `(Q_out − D A β) c_f`.
//!
//! [`open_chamber_faces`] is the one walk over the boundary grid faces that both the steady assembly and the
//! switched-on far field (`transient/far_field_switch_on.rs`) use.

use super::far_field_sources::{FarFieldMedium, FarFieldPoint, FarFieldSumParams, PointSources};
use crate::problem::{ChamberBoundaries, ChamberFace, LigandParameters};
use mesh::{Axis, EmbeddedGeometry, Layout};
use rayon::prelude::*;
use std::time::Instant;

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

/// One open boundary grid face (aperture > 0) of a chamber face whose ligand condition is not closed.
#[derive(Clone, Copy, Debug)]
pub struct OpenChamberFace {
    pub kind: ChamberFace,
    pub grid_cell: usize,
    /// Axis of the outward normal `outward ê_axis`; `outward` is −1 on the low side, +1 on the high side.
    pub axis: usize,
    pub outward: f64,
    /// Face centre (m).
    pub centre: [f64; 3],
    /// Open area (m²).
    pub area: f64,
    /// Volumetric flux leaving the chamber through the face (m³/s).
    pub q_out: f64,
}

/// The open grid faces of every inlet, outlet and far-field chamber face, axis by axis, low side first, in
/// `Grid::boundary_faces` order (walls, symmetry planes and periodic pairs exchange nothing here).
pub fn open_chamber_faces<'a>(
    geometry: &'a EmbeddedGeometry,
    boundaries: &'a ChamberBoundaries,
    face_flux: &'a [Vec<f64>; 3],
) -> impl Iterator<Item = OpenChamberFace> + 'a {
    let grid = &geometry.grid;
    let h = grid.spacing;
    Axis::ALL.into_iter().flat_map(move |axis| {
        let a = axis.index();
        (0..2).flat_map(move |side| {
            let kind = boundaries.faces[a][side];
            let closed = matches!(kind, ChamberFace::Wall | ChamberFace::Symmetry | ChamberFace::Periodic);
            let outward = if side == 0 { -1.0 } else { 1.0 };
            grid.boundary_faces(axis, side).filter(move |_| !closed).filter_map(move |face| {
                let area = geometry.aperture[a][face.face] * h * h;
                (area != 0.0).then(|| OpenChamberFace {
                    kind,
                    grid_cell: face.grid_cell,
                    axis: a,
                    outward,
                    centre: face.centre,
                    area,
                    q_out: outward * face_flux[a][face.face],
                })
            })
        })
    })
}

/// Outflow coefficient of a far-field face with Robin coefficient β: `(Q_out − D A β) c_f`,
/// `c_f = c_P/(1 − β h/2)`.
pub fn far_field_coefficient(face: &OpenChamberFace, diffusivity: f64, beta: f64, spacing: f64) -> f64 {
    // Guard the face extrapolation where β h/2 nears 1 (cell Péclet number ≳ 4 on an outflow face).
    let to_face = 1.0 / (1.0 - 0.5 * beta * spacing).max(0.25);
    (face.q_out - diffusivity * face.area * beta) * to_face
}

/// All boundary-face exchanges of the chamber, and the wall time of the far-field coefficients (s). Those are
/// evaluated in parallel (their cost is faces × cells with `FarFieldSources::Cells`, or the patch sums').
pub fn boundary_exchanges(
    geometry: &EmbeddedGeometry,
    layout: &Layout,
    boundaries: &ChamberBoundaries,
    ligand: &LigandParameters,
    face_flux: &[Vec<f64>; 3],
    far_field_speed: f64,
) -> (Vec<BoundaryExchange>, f64) {
    let h = geometry.grid.spacing;
    let d = ligand.diffusivity;
    let faces: Vec<OpenChamberFace> = open_chamber_faces(geometry, boundaries, face_flux).collect();
    let far_field = faces.iter().any(|f| f.kind == ChamberFace::FarField);
    let started = Instant::now();
    let sources = far_field.then(|| PointSources::new(geometry, layout, boundaries.far_field_sources, None));
    let medium = FarFieldMedium::new(far_field_speed, d, ligand.decay_rate, h);
    let far_points: Vec<FarFieldPoint> = faces
        .iter()
        .filter(|f| f.kind == ChamberFace::FarField)
        .map(|f| FarFieldPoint { centre: f.centre, axis: f.axis, outward: f.outward })
        .collect();
    let mut far_betas = sources
        .as_ref()
        .map_or_else(Vec::new, |s| {
            s.steady_log_gradients(&medium, &far_points, &FarFieldSumParams::default())
        })
        .into_iter();
    let far_field_seconds = if far_field { started.elapsed().as_secs_f64() } else { 0.0 };
    let beta_of_face: Vec<f64> = faces
        .iter()
        .map(|f| if f.kind == ChamberFace::FarField { far_betas.next().unwrap_or(0.0) } else { 0.0 })
        .collect();
    let exchanges = faces
        .par_iter()
        .zip(&beta_of_face)
        .map(|(face, &beta)| {
            let grid_cell = face.grid_cell;
            match face.kind {
                ChamberFace::Inlet => {
                    let g = 2.0 * d * face.area / h;
                    BoundaryExchange {
                        grid_cell,
                        coefficient: g,
                        inflow_constant: (g - face.q_out) * ligand.inlet_concentration,
                    }
                }
                ChamberFace::Outlet => {
                    BoundaryExchange { grid_cell, coefficient: face.q_out, inflow_constant: 0.0 }
                }
                ChamberFace::FarField => BoundaryExchange {
                    grid_cell,
                    coefficient: far_field_coefficient(face, d, beta, h),
                    inflow_constant: 0.0,
                },
                // Never yielded by `open_chamber_faces`: nothing crosses.
                ChamberFace::Wall | ChamberFace::Symmetry | ChamberFace::Periodic => {
                    BoundaryExchange { grid_cell, coefficient: 0.0, inflow_constant: 0.0 }
                }
            }
        })
        .collect();
    (exchanges, far_field_seconds)
}
