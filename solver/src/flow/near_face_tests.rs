//! Every flow model keeps continuity to the solver tolerance in the grid cells between a cell and a chamber face:
//! spheres a fraction of a spacing from the inlet, the outlet and a wall (the check every run makes).

use super::brinkman::{solve_brinkman, BrinkmanMedium, BrinkmanParams};
use super::{check_divergence, solve_darcy, FlowField};
use crate::embedded::FacetStencils;
use crate::linalg::KrylovParams;
use crate::problem::{ChamberBoundaries, ChamberFace};
use mesh::{Cell, EmbeddedGeometry, Grid, Layout};

const H: f64 = 2e-6;
const RADIUS: f64 = 3.0 * H;
const SPEED: f64 = 1e-6;
const TOLERANCE: f64 = 1e-8;

/// A 24 × 14 × 12 chamber (inlet/outlet along x, walls at y, symmetry at z) with three spheres `gap` (in
/// spacings) from the inlet, a wall and the outlet; the sphere axes pass through grid-cell centres.
fn chamber(gap: f64) -> (Grid, ChamberBoundaries, Layout) {
    let grid = Grid::new([0.0; 3], H, [24, 14, 12]);
    let boundaries = ChamberBoundaries::new([
        [ChamberFace::Inlet, ChamberFace::Outlet],
        [ChamberFace::Wall; 2],
        [ChamberFace::Symmetry; 2],
    ]);
    let near = gap * H + RADIUS;
    let centres = [[near, 6.5 * H, 6.5 * H], [12.5 * H, near, 6.5 * H], [24.0 * H - near, 7.5 * H, 5.5 * H]];
    let cells = centres
        .iter()
        .enumerate()
        .map(|(id, &centre)| Cell { id, centre, radius: RADIUS, secretion_rate: 0.0 })
        .collect();
    (grid, boundaries, Layout { cells })
}

fn assert_divergence_free(flow: &FlowField, grid: &Grid, what: &str) {
    let peak = flow.divergence_peak();
    if let Some(warning) = check_divergence(grid, &peak, SPEED, TOLERANCE) {
        panic!("{what}: {warning}");
    }
}

fn krylov() -> KrylovParams {
    KrylovParams { relative_tolerance: TOLERANCE, max_iterations: 400 }
}

#[test]
fn brinkman_and_stokes_are_divergence_free_next_to_inlet_outlet_and_wall() {
    for gap in [0.1, 0.25, 0.5] {
        let (grid, boundaries, layout) = chamber(gap);
        let geometry = EmbeddedGeometry::build(&grid, &layout, boundaries.periodic_axes());
        for (name, permeability) in [("Brinkman", Some(1e-11)), ("Stokes", None)] {
            let medium = BrinkmanMedium { viscosity: 1e-3, effective_viscosity: 1e-3, permeability };
            let settings = BrinkmanParams { krylov: krylov(), ..BrinkmanParams::default() };
            let solved = solve_brinkman(&geometry, &layout, &boundaries, &medium, SPEED, &settings)
                .unwrap_or_else(|e| panic!("{name}, gap {gap} h: {e}"));
            assert_divergence_free(&solved.field, &grid, &format!("{name}, gap {gap} h"));
        }
    }
}

#[test]
fn darcy_is_divergence_free_next_to_inlet_outlet_and_wall() {
    for gap in [0.1, 0.25, 0.5] {
        let (grid, boundaries, layout) = chamber(gap);
        let geometry = EmbeddedGeometry::build(&grid, &layout, boundaries.periodic_axes());
        let stencils = FacetStencils::build(&geometry);
        let flow =
            solve_darcy(&geometry, &stencils, layout.cells.len(), &boundaries, 1e-3, 1e-11, SPEED, &krylov())
                .unwrap_or_else(|e| panic!("Darcy, gap {gap} h: {e}"));
        assert_divergence_free(&flow, &grid, &format!("Darcy, gap {gap} h"));
    }
}
