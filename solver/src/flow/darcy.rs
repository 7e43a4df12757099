//! Darcy flow `u = −(K/μ)∇p`, `∇·u = 0` in the fluid, no flux through the cells.
//!
//! The pressure equation `∇·((K/μ)∇p) = 0` uses the same face-coupled operator as diffusion (two-point fluxes
//! weighted by face apertures), so the face fluxes `Q_f = (K/μ)·aperture·h·(p_L − p_R)` are exactly
//! divergence-free up to the solver tolerance. Chamber faces:
//! - inlet: superficial velocity U normal to the face (flux U·A into the chamber);
//! - outlet: p = 0 on the face;
//! - far field: p = −(μ/K) U (x − x_c), the undisturbed uniform stream (x_c the chamber centre);
//! - wall, symmetry: no flux;
//! - periodic: coupled; along x the mean pressure gradient that yields the mean velocity U is found by solving
//!   with a unit pressure jump per period and scaling (the problem is linear).

use super::pressure_drag::pressure_force;
use super::FlowField;
use crate::boundaries::zero_boundary_faces;
use crate::embedded::FacetStencils;
use crate::linalg::{
    AdvectionScheme, FaceCoupledOperator, KrylovParams, LinearSystem, MultigridParams, SolveError,
    SteadySolver,
};
use crate::problem::{ChamberBoundaries, ChamberFace};
use mesh::{Axis, EmbeddedGeometry};

#[derive(thiserror::Error, Debug)]
pub enum DarcyError {
    #[error("the Darcy pressure solve did not converge: relative residual {relative_residual:.3e} after {iterations} iterations")]
    NoConvergence { iterations: usize, relative_residual: f64, residual_history: Vec<f64> },
    #[error("the Darcy pressure solve produced non-finite values (iteration {iteration})")]
    NonFinite { iteration: usize },
    #[error(
        "the flow has no way through the chamber (no open inlet/outlet/far-field/periodic face carries flux)"
    )]
    Blocked,
}

impl From<SolveError> for DarcyError {
    fn from(e: SolveError) -> Self {
        match e {
            SolveError::NoConvergence { iterations, relative_residual, residual_history } => {
                DarcyError::NoConvergence { iterations, relative_residual, residual_history }
            }
            SolveError::NonFinite { iteration } => DarcyError::NonFinite { iteration },
        }
    }
}

/// One boundary grid face with a prescribed pressure (outlet, far field): outward flux `G (p_P − p_b)`.
struct PressureFace {
    axis: usize,
    face: usize,
    grid_cell: usize,
    outward: f64,
    conductance: f64,
    pressure: f64,
}

/// Solves Darcy flow with mean superficial velocity `mean_velocity` (m/s) along +x.
#[allow(clippy::too_many_arguments)]
pub fn solve_darcy(
    geometry: &EmbeddedGeometry,
    stencils: &FacetStencils,
    cells: usize,
    boundaries: &ChamberBoundaries,
    viscosity: f64,
    permeability: f64,
    mean_velocity: f64,
    krylov: &KrylovParams,
) -> Result<FlowField, DarcyError> {
    let grid = &geometry.grid;
    if mean_velocity == 0.0 {
        return Ok(FlowField::at_rest(cells, grid));
    }
    let h = grid.spacing;
    let n = grid.len();
    let mobility = permeability / viscosity;
    let conductance: [Vec<f64>; 3] = Axis::ALL
        .map(|axis| geometry.aperture[axis.index()].iter().map(|&alpha| mobility * alpha * h).collect());
    let mut sink = vec![0.0; n];
    let mut rhs = vec![0.0; n];
    let mut inlet_flux = [vec![], vec![], vec![]].map(|v: Vec<(usize, f64)>| v);
    let mut pressure_faces = Vec::new();
    let centre_x = grid.origin[0] + 0.5 * grid.shape[0] as f64 * h;

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
                            -(mean_velocity / mobility) * (face.centre[0] - centre_x)
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

    let periodic_x_driven = boundaries.faces[0][0] == ChamberFace::Periodic;
    if periodic_x_driven {
        // Unit pressure drop per period across the wrap faces (face 0 ≡ face nx along x).
        for k in 0..grid.shape[2] {
            for j in 0..grid.shape[1] {
                let fi = grid.face_index(Axis::X, 0, j, k);
                let g = conductance[0][fi];
                rhs[grid.index(grid.shape[0] - 1, j, k)] -= g;
                rhs[grid.index(0, j, k)] += g;
            }
        }
    }
    let active: Vec<bool> = geometry.volume_fraction.iter().map(|&phi| phi > 0.0).collect();
    if pressure_faces.is_empty() {
        // Pure Neumann/periodic problem: pin the first active grid cell (the consistent solution with p = 0 there
        // satisfies the modified row too, so the answer is unchanged).
        match active.iter().position(|&a| a) {
            Some(first) => sink[first] += mobility * h,
            None => return Err(DarcyError::Blocked),
        }
    }
    let mut coupled = conductance.clone();
    for axis in Axis::ALL {
        if !geometry.periodic[axis.index()] {
            zero_boundary_faces(grid, axis, &mut coupled[axis.index()]);
        }
    }
    let operator = FaceCoupledOperator {
        shape: grid.shape,
        periodic: geometry.periodic,
        conductance: coupled,
        flux: Axis::ALL.map(|axis| vec![0.0; grid.face_count(axis)]),
        sink,
        active: active.clone(),
    };
    let system = LinearSystem { operator, scheme: AdvectionScheme::Central, correction: None };
    let solver = SteadySolver::new(system, MultigridParams::default());
    let mut pressure = vec![0.0; n];
    let info = solver.solve(&rhs, &mut pressure, krylov)?;
    if pressure.iter().any(|p| !p.is_finite()) {
        return Err(DarcyError::NonFinite { iteration: info.iterations });
    }

    // Face fluxes from the pressure: interior and periodic faces, then the boundary faces.
    let jump_x = if periodic_x_driven { 1.0 } else { 0.0 };
    let mut face_flux = interior_face_flux(geometry, &conductance, &pressure, jump_x);
    for (a, list) in inlet_flux.iter().enumerate() {
        for &(fi, q) in list {
            face_flux[a][fi] = q;
        }
    }
    for f in &pressure_faces {
        face_flux[f.axis][f.face] = f.outward * f.conductance * (pressure[f.grid_cell] - f.pressure);
    }

    if periodic_x_driven {
        // Scale the unit-jump solution to the requested mean superficial velocity.
        let cross_section = grid.shape[1] as f64 * grid.shape[2] as f64 * h * h;
        let mut through = 0.0;
        for k in 0..grid.shape[2] {
            for j in 0..grid.shape[1] {
                through += face_flux[0][grid.face_index(Axis::X, 0, j, k)];
            }
        }
        if through <= 0.0 {
            return Err(DarcyError::Blocked);
        }
        let scale = mean_velocity * cross_section / through;
        for p in pressure.iter_mut() {
            *p *= scale;
        }
        for faces in face_flux.iter_mut() {
            for q in faces.iter_mut() {
                *q *= scale;
            }
        }
    }
    for (p, &a) in pressure.iter_mut().zip(&active) {
        if !a {
            *p = 0.0;
        }
    }
    let pressure_drop = if periodic_x_driven {
        periodic_pressure_drop(grid, &pressure, &face_flux, &conductance)
    } else {
        super::inlet_outlet_pressure_difference(grid, &pressure, &active)
    };
    let drag = pressure_force(geometry, stencils, &pressure, cells);
    let velocity = FlowField::cell_velocity(grid, &face_flux);
    let max_divergence = FlowField::max_divergence(grid, &face_flux, &active);
    Ok(FlowField {
        face_flux,
        pressure,
        velocity,
        drag,
        iterations: info.iterations,
        relative_residual: info.relative_residual,
        max_divergence,
        pressure_drop,
    })
}

/// Fluxes `G (p_low − p_high)` through interior faces, and through periodic wrap faces (with a pressure jump
/// `jump_x` per period along x).
fn interior_face_flux(
    geometry: &EmbeddedGeometry,
    conductance: &[Vec<f64>; 3],
    p: &[f64],
    jump_x: f64,
) -> [Vec<f64>; 3] {
    let grid = &geometry.grid;
    Axis::ALL.map(|axis| {
        let a = axis.index();
        let s = grid.face_shape(axis);
        let mut q = vec![0.0; grid.face_count(axis)];
        for k in 0..s[2] {
            for j in 0..s[1] {
                for i in 0..s[0] {
                    let f = [i, j, k];
                    let fi = grid.face_index(axis, i, j, k);
                    let n_a = grid.shape[a];
                    let (low, high, jump) = if f[a] == 0 || f[a] == n_a {
                        if !geometry.periodic[a] {
                            continue;
                        }
                        let mut lo = f;
                        lo[a] = n_a - 1;
                        let mut hi = f;
                        hi[a] = 0;
                        (
                            grid.index(lo[0], lo[1], lo[2]),
                            grid.index(hi[0], hi[1], hi[2]),
                            if a == 0 { jump_x } else { 0.0 },
                        )
                    } else {
                        let mut lo = f;
                        lo[a] -= 1;
                        (grid.index(lo[0], lo[1], lo[2]), grid.index(i, j, k), 0.0)
                    };
                    q[fi] = conductance[a][fi] * (p[low] - p[high] + jump);
                }
            }
        }
        q
    })
}

/// Pressure drop per period along x for a periodic, pressure-driven chamber: the scaled jump recovered from
/// one wrap face (flux = G (p_low − p_high + jump)).
fn periodic_pressure_drop(grid: &mesh::Grid, p: &[f64], q: &[Vec<f64>; 3], g: &[Vec<f64>; 3]) -> f64 {
    for k in 0..grid.shape[2] {
        for j in 0..grid.shape[1] {
            let fi = grid.face_index(Axis::X, 0, j, k);
            if g[0][fi] > 0.0 {
                let low = p[grid.index(grid.shape[0] - 1, j, k)];
                let high = p[grid.index(0, j, k)];
                return q[0][fi] / g[0][fi] - (low - high);
            }
        }
    }
    0.0
}
