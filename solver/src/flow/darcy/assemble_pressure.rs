//! The face-coupled operator of the pressure equation `∇·((K/μ)∇p) = 0`: conductances `(K/μ)·aperture·h`, the
//! chamber faces' diagonal, and one pinned grid cell when no face fixes the pressure.

use super::DarcyError;
use crate::boundaries::zero_boundary_faces;
use crate::linalg::{AdvectionScheme, FaceCoupledOperator, LinearSystem};
use mesh::{Axis, EmbeddedGeometry};

/// Conductance `(K/μ)·aperture·h` of every face (boundary faces included: their fluxes use it too).
pub fn face_conductance(geometry: &EmbeddedGeometry, mobility: f64) -> [Vec<f64>; 3] {
    let h = geometry.grid.spacing;
    Axis::ALL.map(|axis| geometry.aperture[axis.index()].iter().map(|&alpha| mobility * alpha * h).collect())
}

/// The pressure system from the face conductances and the chamber faces' diagonal `sink`. `pinned`: no face
/// prescribes the pressure, so the first active grid cell is pinned (the consistent solution with p = 0 there
/// satisfies the modified row too, so the answer is unchanged).
pub fn assemble_pressure(
    geometry: &EmbeddedGeometry,
    conductance: &[Vec<f64>; 3],
    mut sink: Vec<f64>,
    active: &[bool],
    pinned: bool,
    mobility: f64,
) -> Result<LinearSystem, DarcyError> {
    let grid = &geometry.grid;
    if pinned {
        match active.iter().position(|&a| a) {
            Some(first) => sink[first] += mobility * grid.spacing,
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
        active: active.to_vec(),
    };
    Ok(LinearSystem { operator, scheme: AdvectionScheme::Central, correction: None })
}
