//! Face fluxes from the solved pressure: `G (p_low − p_high)` through interior and periodic faces, the
//! prescribed inflow through inlet faces, `G (p_P − p_b)` outward through outlet and far-field faces.

use super::chamber_pressure::ChamberPressure;
use mesh::{Axis, EmbeddedGeometry};

/// Every face's flux (m³/s, positive towards increasing coordinate); `jump_x` is the pressure jump per period
/// along x of a periodic drive (zero otherwise).
pub fn face_flux(
    geometry: &EmbeddedGeometry,
    conductance: &[Vec<f64>; 3],
    chamber: &ChamberPressure,
    pressure: &[f64],
    jump_x: f64,
) -> [Vec<f64>; 3] {
    let mut face_flux = interior_face_flux(geometry, conductance, pressure, jump_x);
    for (a, list) in chamber.inlet_flux.iter().enumerate() {
        for &(fi, q) in list {
            face_flux[a][fi] = q;
        }
    }
    for f in &chamber.pressure_faces {
        face_flux[f.axis][f.face] = f.outward * f.conductance * (pressure[f.grid_cell] - f.pressure);
    }
    face_flux
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
