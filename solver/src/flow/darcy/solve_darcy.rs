//! Steady Darcy flow around the cells: assemble, solve, and hand the transport its face fluxes.

use super::assemble_pressure::{assemble_pressure, face_conductance};
use super::chamber_pressure::chamber_pressure;
use super::face_flux::face_flux;
use super::periodic_drive::{add_unit_jump, periodic_pressure_drop, scale_to_mean_velocity};
use super::DarcyError;
use crate::embedded::FacetStencils;
use crate::flow::pressure_drag::pressure_force;
use crate::flow::{inlet_outlet_pressure_difference, FlowField};
use crate::linalg::{KrylovParams, MultigridParams, SteadySolver};
use crate::problem::{ChamberBoundaries, ChamberFace};
use mesh::EmbeddedGeometry;

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
    let mobility = permeability / viscosity;
    let mut conductance = face_conductance(geometry, mobility);
    let active: Vec<bool> = geometry.volume_fraction.iter().map(|&phi| phi > 0.0).collect();
    close_faces_of_inactive_cells(grid, &active, &mut conductance);
    let mut chamber = chamber_pressure(geometry, boundaries, mobility, mean_velocity);
    let periodic_x_driven = boundaries.faces[0][0] == ChamberFace::Periodic;
    if periodic_x_driven {
        add_unit_jump(grid, &conductance, &mut chamber.rhs);
    }
    let pinned = chamber.pressure_faces.is_empty();
    let sink = std::mem::take(&mut chamber.sink);
    let system = assemble_pressure(geometry, &conductance, sink, &active, pinned, mobility)?;
    let solver = SteadySolver::new(system, MultigridParams::default());
    let mut pressure = vec![0.0; grid.len()];
    let mut info = solver.solve(&chamber.rhs, &mut pressure, krylov)?;
    if pressure.iter().any(|p| !p.is_finite()) {
        return Err(DarcyError::NonFinite { iteration: info.iterations });
    }

    // The relative residual bounds continuity only on average: solve on from the pressure reached, with the
    // tolerance lowered by the excess, until every grid cell keeps its volume to `tolerance × U/h` (the check of
    // every run) or the iteration budget is spent (the run's divergence warning then says where).
    let jump_x = if periodic_x_driven { 1.0 } else { 0.0 };
    let limit = krylov.relative_tolerance * mean_velocity.abs() / grid.spacing;
    let mut tightened = krylov.clone();
    let (mut pressure, face_flux, divergence) = loop {
        let mut flux = face_flux(geometry, &conductance, &chamber, &pressure, jump_x);
        // A periodic drive solves for a unit jump; the scaled copy is what the run gets (and what is checked).
        let scaled = if periodic_x_driven {
            let mut p = pressure.clone();
            scale_to_mean_velocity(grid, mean_velocity, &mut p, &mut flux)?;
            Some(p)
        } else {
            None
        };
        let divergence = crate::flow::divergence_peak(grid, &flux, &active);
        let remaining = krylov.max_iterations.saturating_sub(info.iterations);
        if divergence.value <= limit
            || remaining == 0
            || tightened.relative_tolerance < 1e-3 * krylov.relative_tolerance
        {
            break (scaled.unwrap_or(pressure), flux, divergence);
        }
        tightened.relative_tolerance *= (0.5 * limit / divergence.value).max(1e-2);
        tightened.max_iterations = remaining;
        match solver.solve(&chamber.rhs, &mut pressure, &tightened) {
            Ok(more) => {
                info.iterations += more.iterations;
                info.relative_residual = more.relative_residual;
            }
            // The user's tolerance is still met: keep the pressure reached.
            Err(crate::linalg::SolveError::NoConvergence { iterations, relative_residual, .. })
                if relative_residual <= krylov.relative_tolerance =>
            {
                info.iterations += iterations;
                info.relative_residual = relative_residual;
            }
            Err(e) => return Err(e.into()),
        }
    };
    for (p, &a) in pressure.iter_mut().zip(&active) {
        if !a {
            *p = 0.0;
        }
    }
    let pressure_drop = if periodic_x_driven {
        periodic_pressure_drop(grid, &pressure, &face_flux, &conductance)
    } else {
        inlet_outlet_pressure_difference(grid, &pressure, &active)
    };
    let drag = pressure_force(geometry, stencils, &pressure, cells);
    Ok(FlowField {
        face_flux,
        pressure,
        drag,
        iterations: info.iterations,
        relative_residual: info.relative_residual,
        max_divergence: divergence.value,
        max_divergence_cell: divergence.grid_cell,
        pressure_drop,
    })
}

/// A face with an open aperture beside a grid cell holding no fluid would carry flux into a cell that has no
/// pressure equation, so the fluid neighbour would lose volume whatever the solver tolerance: close such faces.
fn close_faces_of_inactive_cells(grid: &mesh::Grid, active: &[bool], conductance: &mut [Vec<f64>; 3]) {
    for (n, _) in active.iter().enumerate().filter(|(_, &a)| !a) {
        let [i, j, k] = grid.ijk(n);
        for axis in mesh::Axis::ALL {
            let a = axis.index();
            let mut hi = [i, j, k];
            hi[a] += 1;
            conductance[a][grid.face_index(axis, i, j, k)] = 0.0;
            conductance[a][grid.face_index(axis, hi[0], hi[1], hi[2])] = 0.0;
        }
    }
}
