//! Global molecule balance in a dense random layout (volume fraction 0.12) with first-order uptake, bulk decay,
//! an inlet carrying ligand in, an outlet and walls: `secreted = outflow + uptake + decay` must close to about
//! the solver tolerance (Gauss divergence theorem on a conservative scheme; REFERENCES.md item F).

use super::setup::darcy;
use super::{Check, Tier, VerifyError};
use mesh::layout::{random_sequential_addition, ChamberBox, RandomLayout, RandomTarget};
use mesh::Grid;
use solver::linalg::KrylovParams;
use solver::problem::{ChamberBoundaries, ChamberFace, LigandParameters, SurfaceUptake};
use solver::solve_case::{solve_steady_case, SteadyCase};

const TOLERANCE: f64 = 1e-8;

pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let h = 2e-6;
    let shape = match tier {
        Tier::Quick => [64, 32, 32],
        Tier::Full => [128, 64, 64],
    };
    let grid = Grid::new([0.0; 3], h, shape);
    let chamber = ChamberBox { lower: [0.0; 3], upper: grid.extent(), periodic: [false; 3] };
    let spec = RandomLayout {
        target: RandomTarget::VolumeFraction(0.12),
        radius: 4.0 * h,
        secretion_rate: 0.5,
        min_gap: 0.5 * h,
        seed: 11,
    };
    let layout = random_sequential_addition(&spec, &chamber)?;
    let mut faces = [[ChamberFace::Wall; 2]; 3];
    faces[0] = [ChamberFace::Inlet, ChamberFace::Outlet];
    let case = SteadyCase {
        grid: &grid,
        layout: &layout,
        boundaries: ChamberBoundaries::new(faces),
        flow: darcy(1e-13, 2e-6),
        ligand: LigandParameters {
            diffusivity: 1e-10,
            decay_rate: 1e-3,
            inlet_concentration: 1e12,
            uptake: SurfaceUptake::FirstOrder { rate_constant: 2e-6 },
        },
        integration_time: 3600.0,
        krylov: KrylovParams { relative_tolerance: TOLERANCE, ..KrylovParams::default() },
    };
    let solution = solve_steady_case(&case, &mut |_| {})?;
    let b = solution.balance;
    let mut check = Check::new(
        &format!(
            "{} cells, volume fraction 0.12, {}x{}x{}",
            layout.cells.len(),
            shape[0],
            shape[1],
            shape[2]
        ),
        "mass balance relative error",
        b.relative_error,
        0.0,
        10.0 * TOLERANCE,
        "Gauss divergence theorem (REFERENCES.md F)",
    );
    check.relative_error = b.relative_error;
    check.passed = b.relative_error <= 10.0 * TOLERANCE;
    Ok(vec![check])
}
