//! A chamber periodic along x is driven by a pressure jump per period: solved for a unit jump, then scaled so
//! that the mean superficial velocity is the requested one (the problem is linear).

use super::DarcyError;
use mesh::{Axis, Grid};

/// Adds the unit pressure drop per period across the wrap faces (face 0 ≡ face nx along x) to `rhs`.
pub fn add_unit_jump(grid: &Grid, conductance: &[Vec<f64>; 3], rhs: &mut [f64]) {
    for k in 0..grid.shape[2] {
        for j in 0..grid.shape[1] {
            let fi = grid.face_index(Axis::X, 0, j, k);
            let g = conductance[0][fi];
            rhs[grid.index(grid.shape[0] - 1, j, k)] -= g;
            rhs[grid.index(0, j, k)] += g;
        }
    }
}

/// Scales the unit-jump pressure and fluxes to the mean superficial velocity `mean_velocity` (m/s).
pub fn scale_to_mean_velocity(
    grid: &Grid,
    mean_velocity: f64,
    pressure: &mut [f64],
    face_flux: &mut [Vec<f64>; 3],
) -> Result<(), DarcyError> {
    let h = grid.spacing;
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
    Ok(())
}

/// Pressure drop per period along x for a periodic, pressure-driven chamber: the scaled jump recovered from
/// one wrap face (flux = G (p_low − p_high + jump)).
pub fn periodic_pressure_drop(grid: &Grid, p: &[f64], q: &[Vec<f64>; 3], g: &[Vec<f64>; 3]) -> f64 {
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
