//! What the chamber faces put into the Darcy pressure equation: prescribed inflow on inlets (a source), a
//! prescribed pressure behind half a spacing on outlets and far-field faces (a diagonal term and a source),
//! nothing on walls, symmetry planes and periodic faces.
//!
//! A far-field face carries the pressure of the undisturbed stream, `p = −(μ/K) U (x − x_0)`. Beside an outlet
//! (`p = 0` on x_max) the stream's pressure must vanish there too, so `x_0` is the outlet's plane; otherwise a
//! far-field side face would hold a different pressure than the outlet next to it and drive flow out through the
//! sides. Without an outlet `x_0` is the chamber's centre (only pressure differences matter).

use crate::problem::{ChamberBoundaries, ChamberFace};
use mesh::{Axis, EmbeddedGeometry};

/// One boundary grid face with a prescribed pressure (outlet, far field): outward flux `G (p_P − p_b)`.
pub struct PressureFace {
    pub axis: usize,
    pub face: usize,
    pub grid_cell: usize,
    pub outward: f64,
    pub conductance: f64,
    pub pressure: f64,
}

/// The chamber faces' terms of the pressure equation, and what their fluxes will be.
pub struct ChamberPressure {
    /// Diagonal per grid cell (m³/(Pa s)).
    pub sink: Vec<f64>,
    /// Right-hand side per grid cell (m³/s).
    pub rhs: Vec<f64>,
    /// Per axis: `(face, flux)` of every open inlet face (flux signed along the axis).
    pub inlet_flux: [Vec<(usize, f64)>; 3],
    pub pressure_faces: Vec<PressureFace>,
}

/// The chamber-face terms for mobility `K/μ` and mean superficial velocity `mean_velocity` along +x.
pub fn chamber_pressure(
    geometry: &EmbeddedGeometry,
    boundaries: &ChamberBoundaries,
    mobility: f64,
    mean_velocity: f64,
) -> ChamberPressure {
    let grid = &geometry.grid;
    let h = grid.spacing;
    let n = grid.len();
    let mut sink = vec![0.0; n];
    let mut rhs = vec![0.0; n];
    let mut inlet_flux = [vec![], vec![], vec![]].map(|v: Vec<(usize, f64)>| v);
    let mut pressure_faces = Vec::new();
    let zero_pressure_x = if boundaries.faces[0][1] == ChamberFace::Outlet {
        grid.origin[0] + grid.shape[0] as f64 * h
    } else {
        grid.origin[0] + 0.5 * grid.shape[0] as f64 * h
    };

    for axis in Axis::ALL {
        let a = axis.index();
        for side in 0..2 {
            let kind = boundaries.faces[a][side];
            if matches!(kind, ChamberFace::Wall | ChamberFace::Symmetry | ChamberFace::Periodic) {
                continue;
            }
            let outward = if side == 0 { -1.0 } else { 1.0 };
            for face in grid.boundary_faces(axis, side) {
                let alpha = geometry.aperture[a][face.face];
                if alpha == 0.0 {
                    continue;
                }
                let gc = face.grid_cell;
                match kind {
                    ChamberFace::Inlet => {
                        // Flux U·A along the inward normal (the inlet sits on x_min).
                        let q_in = mean_velocity * alpha * h * h;
                        rhs[gc] += q_in;
                        inlet_flux[a].push((face.face, -outward * q_in));
                    }
                    ChamberFace::Outlet | ChamberFace::FarField => {
                        let g = 2.0 * mobility * alpha * h;
                        let pressure = if kind == ChamberFace::Outlet {
                            0.0
                        } else {
                            -(mean_velocity / mobility) * (face.centre[0] - zero_pressure_x)
                        };
                        sink[gc] += g;
                        rhs[gc] += g * pressure;
                        pressure_faces.push(PressureFace {
                            axis: a,
                            face: face.face,
                            grid_cell: gc,
                            outward,
                            conductance: g,
                            pressure,
                        });
                    }
                    ChamberFace::Wall | ChamberFace::Symmetry | ChamberFace::Periodic => {}
                }
            }
        }
    }
    ChamberPressure { sink, rhs, inlet_flux, pressure_faces }
}
