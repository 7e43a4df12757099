//! Building blocks of the verification cases: an isolated sphere in a box, and how to solve it.

use mesh::{Cell, Grid, Layout};
use solver::linalg::KrylovParams;
use solver::problem::{ChamberBoundaries, ChamberFace, FlowParameters, LigandParameters, MediumModel};
use solver::solve_case::{solve_steady_case, CaseSolveError, SteadyCase, SteadySolution};

/// An off-grid offset (in grid spacings) of the sphere centre, so no symmetry of the grid helps the answer.
pub const OFF_GRID: [f64; 3] = [0.137, 0.291, 0.413];

/// A cubic box of half-width `half_width_radii · a` around one sphere of radius `radius` resolved by
/// `radius_in_spacings` grid spacings, the centre shifted off the grid by [`OFF_GRID`].
pub fn isolated_sphere(
    radius: f64,
    radius_in_spacings: f64,
    half_width_radii: f64,
    secretion_rate: f64,
) -> (Grid, Layout) {
    let h = radius / radius_in_spacings;
    let n = (2.0 * half_width_radii * radius_in_spacings).round() as usize;
    let grid = Grid::new([0.0; 3], h, [n, n, n]);
    let centre = [0, 1, 2].map(|a| 0.5 * n as f64 * h + OFF_GRID[a] * h);
    let layout = Layout { cells: vec![Cell { id: 0, centre, radius, secretion_rate }] };
    (grid, layout)
}

/// All six faces far-field.
pub fn far_field_box() -> ChamberBoundaries {
    ChamberBoundaries::new([[ChamberFace::FarField; 2]; 3])
}

/// Darcy medium with the given permeability (m^2), water-like viscosity 1e-3 Pa s.
pub fn darcy(permeability: f64, mean_velocity: f64) -> FlowParameters {
    FlowParameters { medium: MediumModel::Darcy { viscosity: 1e-3, permeability }, mean_velocity }
}

/// Solves with a tight tolerance (verification must not be limited by the linear solver).
pub fn solve(
    grid: &Grid,
    layout: &Layout,
    boundaries: ChamberBoundaries,
    flow: FlowParameters,
    ligand: LigandParameters,
) -> Result<SteadySolution, CaseSolveError> {
    let case = SteadyCase {
        grid,
        layout,
        boundaries,
        flow,
        ligand,
        integration_time: 3600.0,
        krylov: KrylovParams { relative_tolerance: 1e-10, max_iterations: 500 },
    };
    solve_steady_case(&case, &mut |_| {})
}

/// Trilinear interpolation of a cell-centred field at point `x` (m); grid cells without fluid count as given
/// (zero), so sample at least one spacing away from any sphere.
pub fn interpolate_cell_field(grid: &Grid, field: &[f64], x: [f64; 3]) -> f64 {
    let h = grid.spacing;
    let mut base = [0usize; 3];
    let mut t = [0.0; 3];
    for a in 0..3 {
        let s = ((x[a] - grid.origin[a]) / h - 0.5).clamp(0.0, (grid.shape[a] - 2) as f64);
        base[a] = s.floor() as usize;
        t[a] = s - base[a] as f64;
    }
    let mut value = 0.0;
    for corner in 0..8 {
        let o = [corner & 1, (corner >> 1) & 1, (corner >> 2) & 1];
        let w: f64 = (0..3).map(|a| if o[a] == 1 { t[a] } else { 1.0 - t[a] }).product();
        value += w * field[grid.index(base[0] + o[0], base[1] + o[1], base[2] + o[2])];
    }
    value
}
