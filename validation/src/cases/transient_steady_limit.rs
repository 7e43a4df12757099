//! The long-time limit of a transient run equals the steady solver's field for the same case: a secreting,
//! binding sphere with bulk decay (so the approach is exponential, rate k) in a far-field box, run with
//! adaptive steps to t = 40/k. Expected difference: the linear-solver tolerance (the BDF2 fixed point is the
//! steady system, and the switched-on far-field condition has converged to the steady one by e^{−40}).

use super::setup::{darcy, far_field_box, isolated_sphere};
use super::transient_setup::{run_transient, TransientRun};
use super::{Check, Tier, VerifyError};
use solver::problem::{LigandParameters, SurfaceUptake};
use solver::solve_transient::integrate::relative_change;
use solver::solve_transient::TimeStepping;

const RADIUS: f64 = 8e-6;
const DIFFUSIVITY: f64 = 1e-10;

/// `(relative L2 difference from the steady field, accepted steps, rejected steps, worst balance error)`.
pub fn steady_limit(resolution: f64) -> Result<(f64, usize, usize, f64), VerifyError> {
    let unit = RADIUS * RADIUS / DIFFUSIVITY;
    let (grid, layout) = isolated_sphere(RADIUS, resolution, 2.5, 1.0);
    let ligand = LigandParameters {
        diffusivity: DIFFUSIVITY,
        decay_rate: 1.0 / unit,
        inlet_concentration: 0.0,
        uptake: SurfaceUptake::FirstOrder { rate_constant: DIFFUSIVITY / RADIUS },
    };
    let run = TransientRun {
        grid: &grid,
        layout: &layout,
        boundaries: far_field_box(),
        flow: darcy(1e-14, 0.0),
        ligand,
        stepping: TimeStepping::Adaptive {
            initial_step: 0.01 * unit,
            tolerance: 1e-4,
            max_step: 10.0 * unit,
        },
        end_time: 40.0 * unit,
        output_times: vec![40.0 * unit],
        tolerance: 1e-11,
    };
    let (recorded, solution) =
        run_transient(&run, None, false).map_err(|e| VerifyError::Transient(e.to_string()))?;
    let difference = relative_change(&solution.steady.concentration, &solution.state.concentration);
    Ok((difference, solution.state.steps, solution.state.rejected_steps, recorded.worst_balance))
}

pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let resolution = match tier {
        Tier::Quick => 6.0,
        Tier::Full => 10.0,
    };
    let (difference, steps, rejected, balance) = steady_limit(resolution)?;
    let case =
        format!("long-time limit, adaptive BDF2 ({steps} steps, {rejected} rejected), a/h = {resolution}");
    Ok(vec![
        Check::new(
            &case,
            "relative L2 difference from the steady solve",
            difference,
            0.0,
            1e-6,
            "steady solver of the same case",
        ),
        Check::new(
            &case,
            "worst step mass-balance relative error",
            balance,
            0.0,
            1e-9,
            "Gauss divergence theorem, REFERENCES.md F",
        ),
    ])
}
