//! Advection `∇·(u c)` with face fluxes Q_f from the flow solver.
//!
//! Faces whose Péclet number `|Q_f| / G_f` (advective over diffusive conductance, `G_f = D · aperture · h`) is
//! at most 2 use the central face value: second order, and the matrix stays an M-matrix there. Faces above 2
//! use the exponentially fitted flux of Il'in (1969, Math. Notes 6, 596), Allen & Southwell (1955, Q. J. Mech.
//! Appl. Math. 8, 129) and Scharfetter & Gummel (1969, IEEE Trans. Electron Devices 16, 64) [memory]: the exact
//! flux of 1-D steady advection–diffusion between the two cell centres,
//!
//! ```text
//! F = G [B(−P) c_L − B(P) c_U],   B(x) = x / (eˣ − 1),   P = Q/G   (Q positive from L to U),
//! ```
//!
//! which is central advection with the conductance raised to `G_fit = G (P/2) coth(P/2) = (|Q|/2) coth(|Q|/2G)`
//! (so one operator form serves both, and the multigrid coarsens it as any conductance). Both off-diagonal
//! entries `−G B(±P)` stay negative at every P, so the operator is an M-matrix: the scheme is monotone and
//! conservative, linear (no outer iterations), and tends to upwinding as P → ∞. Its error is first order in
//! the cross-stream direction where the flow is oblique to the grid; the run warns where boundary layers at the
//! cell surfaces are not resolved ([`PecletReport::surface_peclet`]).

use mesh::{Axis, EmbeddedGeometry};

/// Face Péclet number above which a face leaves the central flux for the fitted flux.
pub const CENTRAL_PECLET_LIMIT: f64 = 2.0;

/// Which faces are fitted, and how strongly advection dominates.
#[derive(Clone, Debug, Default)]
pub struct PecletReport {
    /// Largest cell Péclet number `|Q_f| / (D h)` (superficial speed over the full face times h over D) over all
    /// faces.
    pub max_cell_peclet: f64,
    /// Largest cell Péclet number over the faces of grid cells cut by a cell surface: above 2 the concentration
    /// boundary layer at the cells is not resolved.
    pub surface_peclet: f64,
    /// Number of faces above [`CENTRAL_PECLET_LIMIT`] (fitted, upwind-weighted flux).
    pub upwinded_faces: usize,
}

/// The conductance of the fitted flux, `(|Q|/2) coth(|Q|/2G)`; pure upwinding (`|Q|/2`) on a closed face.
pub fn fitted_conductance(conductance: f64, flux: f64) -> f64 {
    let half = 0.5 * flux.abs();
    if conductance > 0.0 {
        half / (half / conductance).tanh()
    } else {
        half
    }
}

/// Raises the conductance of faces above the central limit to the fitted one ([`fitted_conductance`]).
pub fn fit_high_peclet_faces(
    geometry: &EmbeddedGeometry,
    face_flux: &[Vec<f64>; 3],
    diffusivity: f64,
    conductance: &mut [Vec<f64>; 3],
) -> PecletReport {
    let grid = &geometry.grid;
    let h = grid.spacing;
    let cut: Vec<bool> = geometry.volume_fraction.iter().map(|&phi| phi > 0.0 && phi < 1.0).collect();
    let mut report = PecletReport::default();
    for axis in Axis::ALL {
        let a = axis.index();
        let shape = grid.face_shape(axis);
        for k in 0..shape[2] {
            for j in 0..shape[1] {
                for i in 0..shape[0] {
                    let f = grid.face_index(axis, i, j, k);
                    let q = face_flux[a][f];
                    let g = &mut conductance[a][f];
                    let pe = q.abs() / (diffusivity * h);
                    report.max_cell_peclet = report.max_cell_peclet.max(pe);
                    if pe > report.surface_peclet && touches_cut_cell(grid, &cut, axis, [i, j, k]) {
                        report.surface_peclet = pe;
                    }
                    // Non-periodic boundary faces never couple (the chamber faces fold them into the rows).
                    let boundary =
                        !geometry.periodic[a] && ([i, j, k][a] == 0 || [i, j, k][a] == grid.shape[a]);
                    if !boundary && q.abs() > CENTRAL_PECLET_LIMIT * *g {
                        *g = fitted_conductance(*g, q);
                        report.upwinded_faces += 1;
                    }
                }
            }
        }
    }
    report
}

/// Whether either grid cell beside face `[i, j, k]` (normal to `axis`) is cut by a cell surface.
fn touches_cut_cell(grid: &mesh::Grid, cut: &[bool], axis: Axis, face: [usize; 3]) -> bool {
    let a = axis.index();
    let upper = (face[a] < grid.shape[a]).then(|| grid.index(face[0], face[1], face[2]));
    let lower = (face[a] > 0).then(|| {
        let mut cell = face;
        cell[a] -= 1;
        grid.index(cell[0], cell[1], cell[2])
    });
    upper.into_iter().chain(lower).any(|n| cut[n])
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The fitted flux `G_fit (c_L − c_U) + Q (c_L + c_U)/2` equals `G [B(−P) c_L − B(P) c_U]`, is exact for
    /// the 1-D solution `A + B e^{P x/h}` of steady advection–diffusion, and tends to G at small P and to
    /// upwinding at large P.
    #[test]
    fn fitted_flux_is_the_exact_one_dimensional_flux() {
        let bernoulli = |x: f64| x / x.exp_m1();
        for (g, q) in [(1.0, 2.5), (2.0, -7.0), (0.3, 40.0), (1e-3, -1.0)] {
            let fit = fitted_conductance(g, q);
            let (cl, cu) = (0.7, 1.9);
            let p = q / g;
            let scheme = fit * (cl - cu) + q * 0.5 * (cl + cu);
            let exact = g * (bernoulli(-p) * cl - bernoulli(p) * cu);
            assert!((scheme - exact).abs() <= 1e-12 * exact.abs().max(1.0), "{scheme} vs {exact}");
            // Off-diagonal entries of both rows are not positive (M-matrix).
            assert!(-fit + 0.5 * q <= 0.0 && -fit - 0.5 * q <= 0.0);
        }
        // c = A + B e^{P x/h} carries the uniform flux Q A; the scheme reproduces it from the two centres.
        let (g, q, a, b) = (0.5, 3.0, 0.4, 0.3);
        let p: f64 = q / g;
        let (cl, cu) = (a + b, a + b * p.exp());
        let scheme = fitted_conductance(g, q) * (cl - cu) + q * 0.5 * (cl + cu);
        assert!((scheme - q * a).abs() < 1e-12, "{scheme} vs {}", q * a);
        assert!((fitted_conductance(1.0, 1e-4) - 1.0).abs() < 1e-8);
        assert!((fitted_conductance(1.0, 100.0) - 50.0).abs() < 1e-12);
        assert_eq!(fitted_conductance(0.0, -3.0), 1.5);
    }
}
