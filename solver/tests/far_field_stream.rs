//! An inlet/outlet chamber whose side faces are far field is a piece of an unbounded uniform stream: without
//! cells every flow model carries the undisturbed stream `(U, 0, 0)` through it, and a single cell in it sits in
//! the mean speed. For Darcy flow past an isolated impermeable sphere the pressure is the potential-flow one,
//! `p = −(μU/K) r cosθ (1 + a³/2r³)` (potential flow past a sphere, Lamb 1932 §92): its dipole averages to zero
//! over any centred shell, so the shell-mean velocity is the stream's, and the pressure force is `2π a³ μU/K`.

use mesh::{Cell, EmbeddedGeometry, Grid, Layout};
use solver::embedded::FacetStencils;
use solver::flow::FlowField;
use solver::linalg::KrylovParams;
use solver::post::local_flow::shell_mean_velocity;
use solver::problem::{
    ChamberBoundaries, ChamberFace, FlowParameters, LigandParameters, MediumModel, SurfaceUptake,
};
use solver::solve_case::{solve_flow, SteadyCase};

const U: f64 = 1e-6;
const RADIUS: f64 = 8e-6;
const TOLERANCE: f64 = 1e-10;

fn stream_boundaries() -> ChamberBoundaries {
    ChamberBoundaries::new([
        [ChamberFace::Inlet, ChamberFace::Outlet],
        [ChamberFace::FarField; 2],
        [ChamberFace::FarField; 2],
    ])
}

/// A cube of 20 radii at `per_radius` grid spacings per radius.
fn grid(per_radius: usize) -> Grid {
    let n = 20 * per_radius;
    Grid::new([0.0; 3], RADIUS / per_radius as f64, [n, n, n])
}

fn flow(grid: &Grid, layout: &Layout, medium: MediumModel) -> (EmbeddedGeometry, FlowField) {
    let case = SteadyCase {
        grid,
        layout,
        boundaries: stream_boundaries(),
        flow: FlowParameters { medium, mean_velocity: U },
        ligand: LigandParameters {
            diffusivity: 1e-10,
            decay_rate: 0.0,
            inlet_concentration: 0.0,
            uptake: SurfaceUptake::None,
        },
        integration_time: 3600.0,
        krylov: KrylovParams { relative_tolerance: TOLERANCE, max_iterations: 500 },
    };
    let geometry = EmbeddedGeometry::build(grid, layout, case.boundaries.periodic_axes());
    let stencils = FacetStencils::build(&geometry);
    let (field, _) = solve_flow(&geometry, &stencils, &case, U).expect("flow solves");
    (geometry, field)
}

fn media() -> [MediumModel; 3] {
    [
        MediumModel::Darcy { viscosity: 1e-3, permeability: 1e-13 },
        MediumModel::Brinkman { viscosity: 1e-3, permeability: 1e-11, effective_viscosity: 1e-3 },
        MediumModel::Stokes { viscosity: 1e-3 },
    ]
}

#[test]
fn a_chamber_without_cells_carries_the_undisturbed_stream() {
    let grid = grid(3);
    for medium in media() {
        let (_, field) = flow(&grid, &Layout::default(), medium);
        let mut worst: f64 = 0.0;
        let [u, v, w] = field.velocity(&grid);
        for ((u, v), w) in u.iter().zip(&v).zip(&w) {
            let error = [u - U, *v, *w];
            worst = worst.max(error.iter().fold(0.0, |m: f64, e| m.max(e.abs())));
        }
        // The linear solve stops at a relative residual of 1e-10; a few orders of magnitude of conditioning
        // on a 64³ grid leave the velocity within 1e-6 of the stream.
        assert!(worst < 1e-6 * U, "{}: largest deviation from the stream {:e} m/s", medium.name(), worst);
    }
}

#[test]
fn one_cell_in_a_darcy_stream_feels_the_mean_speed() {
    // The shell mean over cut grid cells approaches the stream at first order in h/a; 4 spacings per radius is
    // the resolution of the README's example.
    let grid = grid(4);
    let n = grid.shape[0];
    let centre = [0.5 * grid.extent()[0]; 3];
    let layout = Layout { cells: vec![Cell { id: 0, centre, radius: RADIUS, secretion_rate: 1.0 }] };
    let (geometry, field) = flow(&grid, &layout, media()[0]);
    let local = shell_mean_velocity(&geometry, &field.face_flux, &layout.cells[0]);
    assert!((local[0] / U - 1.0).abs() < 0.01, "shell-mean velocity {local:?} against the stream {U}");
    assert!(local[1].abs() < 1e-3 * U && local[2].abs() < 1e-3 * U, "shell-mean velocity {local:?}");
    let drag = 2.0 * std::f64::consts::PI * RADIUS.powi(3) * 1e-3 * U / 1e-13;
    assert!((field.drag[0][0] / drag - 1.0).abs() < 0.01, "drag {:e} N against {drag:e} N", field.drag[0][0]);
    // The whole inflow leaves through the outlet: the far-field sides exchange only the dipole's small
    // disturbance flux, which sums to zero over each side pair.
    let area = grid.spacing * grid.spacing;
    let outlet: f64 =
        (0..n * n).map(|m| field.face_flux[0][grid.face_index(mesh::Axis::X, n, m % n, m / n)]).sum();
    let inflow = U * area * (n * n) as f64;
    assert!((outlet / inflow - 1.0).abs() < 1e-3, "outlet carries {outlet:e} of {inflow:e} m³/s");
}
