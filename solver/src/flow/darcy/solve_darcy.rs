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
    let conductance = face_conductance(geometry, mobility);
    let mut chamber = chamber_pressure(geometry, boundaries, mobility, mean_velocity);
    let periodic_x_driven = boundaries.faces[0][0] == ChamberFace::Periodic;
    if periodic_x_driven {
        add_unit_jump(grid, &conductance, &mut chamber.rhs);
    }
    let active: Vec<bool> = geometry.volume_fraction.iter().map(|&phi| phi > 0.0).collect();
    let pinned = chamber.pressure_faces.is_empty();
    let sink = std::mem::take(&mut chamber.sink);
    let system = assemble_pressure(geometry, &conductance, sink, &active, pinned, mobility)?;
    let solver = SteadySolver::new(system, MultigridParams::default());
    let mut pressure = vec![0.0; grid.len()];
    let info = solver.solve(&chamber.rhs, &mut pressure, krylov)?;
    if pressure.iter().any(|p| !p.is_finite()) {
        return Err(DarcyError::NonFinite { iteration: info.iterations });
    }

    let jump_x = if periodic_x_driven { 1.0 } else { 0.0 };
    let mut face_flux = face_flux(geometry, &conductance, &chamber, &pressure, jump_x);
    if periodic_x_driven {
        scale_to_mean_velocity(grid, mean_velocity, &mut pressure, &mut face_flux)?;
    }
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
    let velocity = FlowField::cell_velocity(grid, &face_flux);
    let divergence = crate::flow::divergence_peak(grid, &face_flux, &active);
    Ok(FlowField {
        face_flux,
        pressure,
        velocity,
        drag,
        iterations: info.iterations,
        relative_residual: info.relative_residual,
        max_divergence: divergence.value,
        max_divergence_cell: divergence.grid_cell,
        pressure_drop,
    })
}
