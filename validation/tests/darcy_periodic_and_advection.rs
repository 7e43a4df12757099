//! Darcy flow through a periodic simple-cubic array of impermeable spheres, and advection-dominated transport.

use mesh::{Cell, Grid, Layout};
use solver::linalg::KrylovParams;
use solver::problem::{
    ChamberBoundaries, ChamberFace, FlowParameters, LigandParameters, MediumModel, SurfaceUptake,
};
use solver::solve_case::{solve_steady_case, SteadyCase};

fn darcy(mean_velocity: f64) -> FlowParameters {
    FlowParameters { medium: MediumModel::Darcy { viscosity: 1e-3, permeability: 1e-13 }, mean_velocity }
}

fn reflecting() -> LigandParameters {
    LigandParameters {
        diffusivity: 1e-10,
        decay_rate: 0.0,
        inlet_concentration: 0.0,
        uptake: SurfaceUptake::None,
    }
}

/// Darcy flow around impermeable inclusions is the conduction problem with insulating spheres, whose effective
/// conductivity for a dilute simple-cubic array is Maxwell's `(1 − φ)/(1 + φ/2)` (Maxwell 1873, Treatise §314
/// [memory]); Rayleigh's (1892) [memory] correction is O(φ^{10/3}) ≈ 5e-5 at φ = 0.05, below this test's 1%.
/// So the pressure drop per period is `μ U L (1 + φ/2) / (K (1 − φ))`.
#[test]
fn periodic_array_pressure_drop_matches_maxwell() {
    let phi: f64 = 0.05;
    let n = 40usize;
    let h = 1e-6;
    let length = n as f64 * h;
    let radius = (3.0 * phi / (4.0 * std::f64::consts::PI)).cbrt() * length;
    let grid = Grid::new([0.0; 3], h, [n, n, n]);
    let centre = [0.5 * length + 0.21 * h, 0.5 * length + 0.37 * h, 0.5 * length + 0.13 * h];
    let layout = Layout { cells: vec![Cell { id: 0, centre, radius, secretion_rate: 1.0 }] };
    let speed = 1e-6;
    let case = SteadyCase {
        grid: &grid,
        layout: &layout,
        boundaries: ChamberBoundaries::new([[ChamberFace::Periodic; 2]; 3]),
        flow: darcy(speed),
        ligand: LigandParameters { decay_rate: 1e-2, ..reflecting() },
        integration_time: 3600.0,
        krylov: KrylovParams { relative_tolerance: 1e-10, max_iterations: 300 },
    };
    let solution = solve_steady_case(&case, &mut |_| {}).expect("solves");
    let expected = 1e-3 * speed * length * (1.0 + phi / 2.0) / (1e-13 * (1.0 - phi));
    let measured = solution.flow.pressure_drop;
    let rel = (measured - expected).abs() / expected;
    eprintln!("pressure drop per period: measured {measured:.6e} Pa, Maxwell {expected:.6e} Pa, rel. diff {rel:.2e} (a/h = {:.1})", radius / h);
    assert!(rel < 0.01, "pressure drop {measured:e} vs Maxwell {expected:e}: {rel:.2e}");
    // Mean superficial velocity through a mid plane equals U (discretely divergence-free flow).
    let mid: f64 = (0..n * n)
        .map(|m| solution.flow.face_flux[0][grid.face_index(mesh::Axis::X, n / 2, m % n, m / n)])
        .sum();
    let mean = mid / (length * length);
    assert!((mean - speed).abs() < 1e-8 * speed, "mean velocity {mean:e} vs {speed:e}");
    // A periodic box with decay: everything secreted decays (no faces to leave through).
    assert!(solution.balance.relative_error < 1e-8, "balance {:?}", solution.balance);
    assert!((solution.balance.decay - 1.0).abs() < 1e-7, "decay {:?}", solution.balance);
}

/// Cell Péclet numbers above 2 switch faces to the exponentially fitted flux (an M-matrix): the solution must
/// stay free of undershoots (no negative concentration) and conserve mass.
#[test]
fn high_cell_peclet_stays_bounded_and_conservative() {
    let h = 2e-6;
    let grid = Grid::new([0.0; 3], h, [64, 24, 24]);
    let layout = Layout {
        cells: vec![Cell { id: 0, centre: [30e-6, 24.3e-6, 23.7e-6], radius: 8e-6, secretion_rate: 1.0 }],
    };
    let mut faces = [[ChamberFace::Wall; 2]; 3];
    faces[0] = [ChamberFace::Inlet, ChamberFace::Outlet];
    // U h / D = 5 on the undisturbed stream, more beside the cell.
    let case = SteadyCase {
        grid: &grid,
        layout: &layout,
        boundaries: ChamberBoundaries::new(faces),
        flow: darcy(2.5e-4),
        ligand: reflecting(),
        integration_time: 3600.0,
        krylov: KrylovParams { relative_tolerance: 1e-9, max_iterations: 300 },
    };
    let solution = solve_steady_case(&case, &mut |_| {}).expect("solves");
    let peclet = &solution.transport.assembly.peclet;
    assert!(peclet.upwinded_faces > 0 && peclet.max_cell_peclet > 5.0, "{peclet:?}");
    let min = solution.transport.concentration.iter().cloned().fold(f64::INFINITY, f64::min);
    let max = solution.transport.concentration.iter().cloned().fold(0.0, f64::max);
    eprintln!(
        "max cell Pe {:.2}, {} iterations, min/max concentration {min:.3e}/{max:.3e}",
        peclet.max_cell_peclet, solution.transport.iterations
    );
    assert!(min >= -1e-6 * max, "undershoot: min {min:e}, max {max:e}");
    assert!(solution.balance.relative_error < 1e-7, "balance {:?}", solution.balance);
}
