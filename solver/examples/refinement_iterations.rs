//! Prints the flow and transport iteration counts of one cut-cell case refined 32³ → 64³ → 128³ (the set-up of
//! `validation/tests/multigrid_flatness.rs`), to see quickly how a multigrid change moves them.
//!
//! `cargo run --release -p solver --example refinement_iterations`

use mesh::layout::{lattice, ChamberBox};
use mesh::Grid;
use solver::linalg::KrylovParams;
use solver::problem::{
    ChamberBoundaries, ChamberFace, FlowParameters, LigandParameters, MediumModel, SurfaceUptake,
};
use solver::solve_case::{solve_steady_case, SteadyCase};
use std::time::Instant;

fn main() {
    let length = 128e-6;
    let chamber = ChamberBox { lower: [0.0; 3], upper: [length; 3], periodic: [false; 3] };
    let Ok(layout) = lattice([64e-6; 3], &chamber, 10e-6, 0.5) else {
        eprintln!("lattice layout failed");
        std::process::exit(1);
    };
    let mut faces = [[ChamberFace::Wall; 2]; 3];
    faces[0] = [ChamberFace::Inlet, ChamberFace::Outlet];
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
        let t = Instant::now();
        match solve_steady_case(&case, &mut |_| {}) {
            Ok(s) => println!(
                "{n}^3: flow {} iterations, transport {} iterations (residual {:.2e}); {:.2} s",
                s.flow.iterations,
                s.transport.iterations,
                s.transport.relative_residual,
                t.elapsed().as_secs_f64()
            ),
            Err(e) => println!("{n}^3: failed: {e}"),
        }
    }
}
