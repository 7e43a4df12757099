//! The fully developed inflow profile of the chamber cross-section.
//!
//! Far upstream the flow no longer changes along the chamber, so the inflow speed w(y, z) solves the
//! cross-section Brinkman problem
//!
//! ```text
//! −μ_e (∂²w/∂y² + ∂²w/∂z²) + (μ/K) w = G ,
//! ```
//!
//! with no slip on wall sides, zero shear on symmetry/outlet/far-field sides and wrap-around on periodic sides,
//! scaled so that its mean over the face is the requested superficial velocity. Without walls it is the plug
//! flow. It is discretised like the momentum equation itself (5-point, walls half a spacing from the nodes), so
//! the inflow is the discrete fully developed flow of the same scheme.

use crate::linalg::{
    AdvectionScheme, FaceCoupledOperator, KrylovParams, LinearSystem, MultigridParams, SolveError,
    SteadySolver,
};
use crate::problem::{ChamberBoundaries, ChamberFace};
use mesh::Grid;

/// Inflow speed on the chamber face normal to `axis` at the face centres `(u, v)` of the two other axes
/// (`(axis + 1) % 3`, `(axis + 2) % 3`), flattened `u + n_u v`; mean `mean_velocity`.
pub fn fully_developed_profile(
    grid: &Grid,
    boundaries: &ChamberBoundaries,
    axis: usize,
    effective_viscosity: f64,
    resistivity: f64,
    mean_velocity: f64,
    krylov: &KrylovParams,
) -> Result<Vec<f64>, SolveError> {
    let (b, c) = ((axis + 1) % 3, (axis + 2) % 3);
    let (nu, nv) = (grid.shape[b], grid.shape[c]);
    let walled = |a: usize, side: usize| boundaries.faces[a][side] == ChamberFace::Wall;
    let any_wall = (0..2).any(|s| walled(b, s) || walled(c, s));
    if !any_wall || mean_velocity == 0.0 {
        return Ok(vec![mean_velocity; nu * nv]);
    }
    let h = grid.spacing;
    // One layer thick along x; the cross-section axes sit on y and z of the auxiliary operator.
    let shape = [1, nu, nv];
    let periodic = [
        false,
        boundaries.faces[b][0] == ChamberFace::Periodic,
        boundaries.faces[c][0] == ChamberFace::Periodic,
    ];
    let face_count = |a: usize| {
        let mut s = shape;
        s[a] += 1;
        s[0] * s[1] * s[2]
    };
    let mut conductance = [vec![0.0; face_count(0)], vec![0.0; face_count(1)], vec![0.0; face_count(2)]];
    let mut sink = vec![resistivity * h.powi(3); nu * nv];
    for (aux, real, n_along) in [(1usize, b, nu), (2usize, c, nv)] {
        let mut s = shape;
        s[aux] += 1;
        for v in 0..nv {
            for u in 0..nu {
                let idx = [0, u, v];
                let along = idx[aux];
                let face = |i: usize| {
                    let mut f = idx;
                    f[aux] = i;
                    f[0] + s[0] * (f[1] + s[1] * f[2])
                };
                // Interior face below this node (and the wrap face when periodic).
                if along > 0 || periodic[aux] {
                    conductance[aux][face(along)] = effective_viscosity * h;
                }
                for side in 0..2 {
                    let at_side = if side == 0 { along == 0 } else { along == n_along - 1 };
                    if at_side && walled(real, side) {
                        sink[u + nu * v] += 2.0 * effective_viscosity * h;
                    }
                }
            }
        }
    }
    let operator = FaceCoupledOperator {
        shape,
        periodic,
        conductance,
        flux: [vec![0.0; face_count(0)], vec![0.0; face_count(1)], vec![0.0; face_count(2)]],
        sink,
        active: vec![true; nu * nv],
    };
    let solver = SteadySolver::new(
        LinearSystem { operator, scheme: AdvectionScheme::Central, correction: None },
        MultigridParams::default(),
    );
    let rhs = vec![h.powi(3); nu * nv];
    let mut w = vec![0.0; nu * nv];
    let params = KrylovParams { relative_tolerance: krylov.relative_tolerance.min(1e-10), ..krylov.clone() };
    solver.solve(&rhs, &mut w, &params)?;
    let mean = w.iter().sum::<f64>() / w.len() as f64;
    Ok(w.iter().map(|x| x * mean_velocity / mean).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Between two walls (y) with symmetry along z the profile is the plane Brinkman channel profile
    /// `1 − cosh(βy)/cosh(βH)` (REFERENCES.md item A) up to the scheme's O(h²) error.
    #[test]
    fn plane_channel_profile_matches_the_analytic_shape() {
        let half = 1.0;
        let beta: f64 = 3.0;
        let mut errors = Vec::new();
        for n in [40, 80] {
            let grid = Grid::new([0.0, -half, 0.0], 2.0 * half / n as f64, [4, n, 2]);
            let mut faces = [[ChamberFace::Symmetry; 2]; 3];
            faces[0] = [ChamberFace::Inlet, ChamberFace::Outlet];
            faces[1] = [ChamberFace::Wall; 2];
            let boundaries = ChamberBoundaries::new(faces);
            let w = fully_developed_profile(
                &grid,
                &boundaries,
                0,
                1.0,
                beta * beta,
                1.0,
                &KrylovParams::default(),
            )
            .expect("solves");
            let shape = |y: f64| 1.0 - (beta * y).cosh() / (beta * half).cosh();
            let mean_shape = 1.0 - (beta * half).tanh() / (beta * half);
            let mut worst: f64 = 0.0;
            for j in 0..n {
                let y = -half + (j as f64 + 0.5) * grid.spacing;
                worst = worst.max((w[j] - shape(y) / mean_shape).abs());
                assert!((w[j] - w[j + n]).abs() < 1e-9, "uniform along z");
            }
            errors.push(worst);
        }
        let order = (errors[0] / errors[1]).log2();
        assert!(errors[1] < 5e-3 && order > 1.8, "errors {errors:?}, order {order}");
    }
}
