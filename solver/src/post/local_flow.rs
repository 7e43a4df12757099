//! The flow a cell sits in: the superficial velocity averaged over the fluid in the shell a < r < 2a around it.
//!
//! For an isolated sphere in Darcy (potential) flow this average is exactly the undisturbed stream, because the
//! dipole disturbance integrates to zero over any spherical shell centred on the sphere; in crowded layouts it is
//! the local mean flow the cell feels.

use crate::flow::FlowField;
use mesh::{Cell, EmbeddedGeometry};

/// Shell-averaged superficial velocity around `cell` (m/s), from the flow's face fluxes (m³/s).
pub fn shell_mean_velocity(geometry: &EmbeddedGeometry, face_flux: &[Vec<f64>; 3], cell: &Cell) -> [f64; 3] {
    let grid = &geometry.grid;
    let h = grid.spacing;
    let outer = 2.0 * cell.radius;
    let mut sum = [0.0; 3];
    let mut weight = 0.0;
    let lo = [0, 1, 2].map(|a| ((cell.centre[a] - outer - grid.origin[a]) / h).floor() as i64);
    let hi = [0, 1, 2].map(|a| ((cell.centre[a] + outer - grid.origin[a]) / h).ceil() as i64);
    for k in lo[2]..=hi[2] {
        for j in lo[1]..=hi[1] {
            for i in lo[0]..=hi[0] {
                let mut idx = [i, j, k];
                let mut inside = true;
                for (a, v) in idx.iter_mut().enumerate() {
                    let n = grid.shape[a] as i64;
                    if *v < 0 || *v >= n {
                        if geometry.periodic[a] {
                            *v = v.rem_euclid(n);
                        } else {
                            inside = false;
                        }
                    }
                }
                if !inside {
                    continue;
                }
                // Distance from the cell centre to the (unwrapped) grid-cell centre.
                let x = [i, j, k].map(|v| v as f64);
                let r2: f64 =
                    (0..3).map(|a| (grid.origin[a] + (x[a] + 0.5) * h - cell.centre[a]).powi(2)).sum();
                let r = r2.sqrt();
                if r <= cell.radius || r >= outer {
                    continue;
                }
                let n = grid.index(idx[0] as usize, idx[1] as usize, idx[2] as usize);
                let w = geometry.volume_fraction[n];
                let velocity = FlowField::cell_velocity_at(grid, face_flux, n);
                for a in 0..3 {
                    sum[a] += w * velocity[a];
                }
                weight += w;
            }
        }
    }
    if weight > 0.0 {
        sum.map(|s| s / weight)
    } else {
        [0.0; 3]
    }
}
