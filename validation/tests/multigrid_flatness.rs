//! Multigrid-preconditioned BiCGSTAB on the real cut-cell transport system: the iteration count must stay flat
//! when the same chamber is refined 32³ → 64³ → 128³ (at most +3 iterations in total; common practice for a
//! working multigrid preconditioner: its contraction does not depend on h).

use mesh::layout::{lattice, ChamberBox};
use mesh::Grid;
use solver::linalg::KrylovParams;
use solver::problem::{
    ChamberBoundaries, ChamberFace, FlowParameters, LigandParameters, MediumModel, SurfaceUptake,
};
use solver::solve_case::{solve_steady_case, SteadyCase};

#[test]
fn transport_iterations_flat_under_refinement() {
    let length = 128e-6;
    let chamber = ChamberBox { lower: [0.0; 3], upper: [length; 3], periodic: [false; 3] };
    // Eight cells on a 2×2×2 lattice, radius 10 um: 2.5, 5 and 10 grid spacings on the three grids.
    let layout = lattice([64e-6; 3], &chamber, 10e-6, 0.5).expect("lattice layout");
    let mut faces = [[ChamberFace::Wall; 2]; 3];
    faces[0] = [ChamberFace::Inlet, ChamberFace::Outlet];
    let mut iterations = Vec::new();
    for n in [32usize, 64, 128] {
        let grid = Grid::new([0.0; 3], length / n as f64, [n, n, n]);
        let case = SteadyCase {
            grid: &grid,
            layout: &layout,
            boundaries: ChamberBoundaries::new(faces),
            flow: FlowParameters {
                medium: MediumModel::Darcy { viscosity: 1e-3, permeability: 1e-13 },
                mean_velocity: 5e-6,
            },
            ligand: LigandParameters {
                diffusivity: 1e-10,
                decay_rate: 1e-3,
                inlet_concentration: 0.0,
                uptake: SurfaceUptake::FirstOrder { rate_constant: 1e-6 },
            },
            integration_time: 3600.0,
            krylov: KrylovParams { relative_tolerance: 1e-8, max_iterations: 300 },
        };
        let solution = solve_steady_case(&case, &mut |_| {}).expect("solves");
        eprintln!(
            "{n}^3: transport {} iterations (residual {:.2e}), flow {} iterations",
            solution.transport.iterations, solution.transport.relative_residual, solution.flow.iterations
        );
        iterations.push((solution.transport.iterations, solution.flow.iterations));
    }
    let (t0, f0) = iterations[0];
    for &(t, f) in &iterations[1..] {
        assert!(t <= t0 + 3, "transport iterations {iterations:?} grow by more than 3 from 32^3");
        assert!(f <= f0 + 3, "flow iterations {iterations:?} grow by more than 3 from 32^3");
    }
}
