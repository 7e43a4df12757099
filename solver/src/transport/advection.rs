//! Advection `∇·(u c)` with face fluxes Q_f from the flow solver.
//!
//! Faces whose cell Péclet number `|Q_f| / (D h)` (superficial speed over the full face times h over D) is at
//! most 2 use the central face value, which is second order and monotone there. Faces above 2 take the upwind
//! value in the matrix — written as central plus an artificial conductance `|Q_f|/2`, so one operator form
//! serves both — and a deferred correction on the right-hand side restores a limited second-order upwind-biased
//! face value (van Leer limiter; Van Leer 1974, J. Comput. Phys. 14, 361 [memory]) over outer iterations.

use mesh::{Axis, EmbeddedGeometry};

/// Cell Péclet number above which a face switches from central to limited upwind-biased advection.
pub const CENTRAL_PECLET_LIMIT: f64 = 2.0;

/// Which faces need upwinding, and how strongly advection dominates.
#[derive(Clone, Debug, Default)]
pub struct PecletReport {
    /// Largest cell Péclet number over all faces.
    pub max_cell_peclet: f64,
    /// Number of faces above [`CENTRAL_PECLET_LIMIT`].
    pub upwinded_faces: usize,
}

fn cell_peclet(flux: f64, diffusivity: f64, h: f64) -> f64 {
    flux.abs() / (diffusivity * h)
}

/// Adds `|Q|/2` to the conductance of faces above the central limit (turning them upwind in the matrix).
pub fn upwind_high_peclet_faces(
    geometry: &EmbeddedGeometry,
    face_flux: &[Vec<f64>; 3],
    diffusivity: f64,
    conductance: &mut [Vec<f64>; 3],
) -> PecletReport {
    let h = geometry.grid.spacing;
    let mut report = PecletReport::default();
    for axis in Axis::ALL {
        let a = axis.index();
        for (g, &q) in conductance[a].iter_mut().zip(&face_flux[a]) {
            let pe = cell_peclet(q, diffusivity, h);
            report.max_cell_peclet = report.max_cell_peclet.max(pe);
            if pe > CENTRAL_PECLET_LIMIT {
                *g += 0.5 * q.abs();
                report.upwinded_faces += 1;
            }
        }
    }
    report
}

/// One upwinded interior face with its limited correction weight: the upwind-biased face value is
/// `c_U + ψ(r)/2 (c_D − c_U)`, so the flux beyond upwind is `weight · (c_D − c_U)` with `weight = |Q| ψ(r)/2`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LimitedFace {
    pub upstream: usize,
    pub downstream: usize,
    /// `|Q| ψ(r)/2` (m^3/s), ψ the van Leer limiter evaluated on `c`.
    pub weight: f64,
}

/// The upwinded interior faces of `c` whose limited correction is non-zero.
pub fn limited_faces(
    geometry: &EmbeddedGeometry,
    face_flux: &[Vec<f64>; 3],
    diffusivity: f64,
    c: &[f64],
) -> Vec<LimitedFace> {
    let grid = &geometry.grid;
    let h = grid.spacing;
    let [nx, ny, nz] = grid.shape;
    let active = |n: usize| geometry.volume_fraction[n] > 0.0;
    let mut faces = Vec::new();
    for axis in Axis::ALL {
        let a = axis.index();
        let n_a = grid.shape[a];
        let stride = [1, nx, nx * ny][a];
        for k in 0..nz {
            for j in 0..ny {
                for i in 0..nx {
                    let cell = [i, j, k];
                    // The face on the low side of this cell, between cell − 1 and cell along `a`.
                    if cell[a] == 0 {
                        continue;
                    }
                    let q = face_flux[a][grid.face_index(axis, i, j, k)];
                    if cell_peclet(q, diffusivity, h) <= CENTRAL_PECLET_LIMIT {
                        continue;
                    }
                    let right = grid.index(i, j, k);
                    let left = right - stride;
                    if !active(left) || !active(right) {
                        continue;
                    }
                    let (up, down, far_up) = if q > 0.0 {
                        (left, right, (cell[a] >= 2).then(|| left - stride))
                    } else {
                        (right, left, (cell[a] + 1 < n_a).then(|| right + stride))
                    };
                    let Some(far_up) = far_up.filter(|&n| active(n)) else { continue };
                    let jump = c[down] - c[up];
                    if jump == 0.0 {
                        continue;
                    }
                    let r = (c[up] - c[far_up]) / jump;
                    let psi = (r + r.abs()) / (1.0 + r.abs());
                    if psi != 0.0 {
                        faces.push(LimitedFace {
                            upstream: up,
                            downstream: down,
                            weight: q.abs() * 0.5 * psi,
                        });
                    }
                }
            }
        }
    }
    faces
}

/// Right-hand side of the deferred correction for the current iterate `c`: on every upwinded interior face the
/// flux `Q ψ(r)/2 (c_D − c_U)` moves from the matrix (which holds the upwind flux) to the right-hand side.
/// Returns the correction per grid cell (molecules/s, to be added to the right-hand side).
pub fn deferred_correction(
    geometry: &EmbeddedGeometry,
    face_flux: &[Vec<f64>; 3],
    diffusivity: f64,
    c: &[f64],
) -> Vec<f64> {
    let mut correction = vec![0.0; geometry.grid.len()];
    for f in limited_faces(geometry, face_flux, diffusivity, c) {
        let flux = f.weight * (c[f.downstream] - c[f.upstream]);
        correction[f.upstream] -= flux;
        correction[f.downstream] += flux;
    }
    correction
}
