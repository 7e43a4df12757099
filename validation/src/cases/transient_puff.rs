//! An instantaneous release (Gaussian blob) carried by a uniform flow through a cell-free periodic box: the
//! moving Gaussian `M (4πDt)^{−3/2} exp(−|x − x₀ − Ut ê_x|²/(4Dt))` (Carslaw & Jaeger 1959 §10.2 [memory],
//! Galilean-shifted; validation's `point_source_stream.rs`, `puff_concentration`).
//!
//! Checked: the amount in the box is conserved to the linear-solver tolerance (no source, no sink, periodic
//! faces: every face flux leaves one grid cell and enters the next); the L2 error against the moving Gaussian
//! falls at second order when the grid (and the step) is halved.

use super::{observed_order, Check, Tier, VerifyError};
use crate::reference::point_source_stream::PointSourceInStream;
use mesh::{Axis, EmbeddedGeometry, Grid, Layout};
use solver::embedded::FacetStencils;
use solver::linalg::{KrylovParams, MultigridParams};
use solver::post::SensingModel;
use solver::problem::{ChamberBoundaries, ChamberFace, LigandParameters, SurfaceUptake};
use solver::solve_transient::{
    initial_state, integrate, FlowPhase, StepReport, TimeStepping, TransientObserver, TransientOutput,
    TransientParams, TransientProblem, TransientState,
};

const SOURCE: &str =
    "Carslaw & Jaeger 1959 §10.2 (instantaneous point source, moving frame), REFERENCES.md C";
/// Box edge, diffusivity, speed, release age at t = 0, run time (SI; cell Péclet U h/D = 1.25 at n = 24, central everywhere).
const EDGE: f64 = 1.0;
const D: f64 = 1e-3;
const U: f64 = 0.03;
const AGE: f64 = 2.5;
const RUN: f64 = 4.0;
const AMOUNT: f64 = 1.0;

struct Last {
    field: Vec<f64>,
    stored: Vec<f64>,
}

impl TransientObserver for Last {
    fn step(&mut self, _: &TransientState, _: &StepReport) -> Result<(), String> {
        Ok(())
    }
    fn output(&mut self, o: &TransientOutput<'_>) -> Result<(), String> {
        self.field = o.concentration.to_vec();
        self.stored.push(o.balance.stored);
        Ok(())
    }
}

/// Relative L2 error against the moving Gaussian and the relative drift of the stored amount, on n³ cells.
pub fn puff_errors(n: usize, step: f64) -> Result<(f64, f64), VerifyError> {
    let h = EDGE / n as f64;
    let grid = Grid::new([0.0; 3], h, [n, n, n]);
    let layout = Layout { cells: Vec::new() };
    let geometry = EmbeddedGeometry::build(&grid, &layout, [true; 3]);
    let stencils = FacetStencils::build(&geometry);
    let mut flux = Axis::ALL.map(|axis| vec![0.0; grid.face_count(axis)]);
    flux[0].iter_mut().for_each(|q| *q = U * h * h);
    let ligand = LigandParameters {
        diffusivity: D,
        decay_rate: 0.0,
        inlet_concentration: 0.0,
        uptake: SurfaceUptake::None,
    };
    let exact = PointSourceInStream::new(1.0, U, D, 0.0)?;
    let start = [0.3, 0.5, 0.5];
    let field_at = |t: f64| -> Vec<f64> {
        (0..grid.len())
            .map(|p| {
                let [i, j, k] = grid.ijk(p);
                let x = grid.cell_centre(i, j, k);
                // Shift so that the release point of the puff, seen at age t, is at `start` at t = AGE.
                let rel = [x[0] - start[0] + U * AGE, x[1] - start[1], x[2] - start[2]];
                exact.puff_concentration(AMOUNT, rel, t)
            })
            .collect()
    };
    let problem = TransientProblem {
        geometry: &geometry,
        stencils: &stencils,
        layout: &layout,
        boundaries: ChamberBoundaries::new([[ChamberFace::Periodic; 2]; 3]),
        ligand,
        phases: vec![FlowPhase { start: 0.0, face_flux: &flux, mean_velocity: U }],
        secretion_start: Vec::new(),
        sensing: SensingModel { uptake: SurfaceUptake::None, diffusivity: D, integration_time: 1.0 },
    };
    let params = TransientParams {
        start_time: 0.0,
        end_time: RUN,
        stepping: TimeStepping::Fixed { step },
        output_times: vec![RUN / 2.0, RUN],
        krylov: KrylovParams { relative_tolerance: 1e-12, max_iterations: 500 },
        multigrid: MultigridParams::default(),
        window_start: 0.0,
        readable_error: 1.0,
        steady: None,
        stop_at_steady: None,
        switched_on_far_field: false,
        split_cells: Vec::new(),
    };
    let initial = field_at(AGE);
    let volume = grid.cell_volume();
    let initial_amount: f64 = initial.iter().sum::<f64>() * volume;
    let state = initial_state(&problem, &params, initial);
    let mut last = Last { field: Vec::new(), stored: Vec::new() };
    integrate(&problem, &params, state, &mut last).map_err(|e| VerifyError::Transient(e.to_string()))?;
    let expected = field_at(AGE + RUN);
    let num: f64 = last.field.iter().zip(&expected).map(|(a, b)| (a - b) * (a - b)).sum();
    let den: f64 = expected.iter().map(|b| b * b).sum();
    let drift = last.stored.iter().map(|m| ((m - initial_amount) / initial_amount).abs()).fold(0.0, f64::max);
    Ok(((num / den).sqrt(), drift))
}

pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let grids: &[usize] = match tier {
        Tier::Quick => &[24, 48],
        Tier::Full => &[32, 64],
    };
    let mut errors = Vec::new();
    let mut drift = 0.0f64;
    for &n in grids {
        // The step shrinks with h so that the time error falls with the space error.
        let (e, d) = puff_errors(n, 0.2 * 24.0 / n as f64)?;
        errors.push(e);
        drift = drift.max(d);
    }
    let order = observed_order(errors[0], errors[1], 2.0);
    let case = format!("Gaussian puff in a periodic box, n = {}", grids[1]);
    Ok(vec![
        Check::new(&case, "relative L2 error of the field", errors[1], 0.0, 5e-2, SOURCE)
            .with_order(order, 1.8),
        Check::new(
            &case,
            "relative drift of the stored amount",
            drift,
            0.0,
            1e-10,
            "conservative finite volumes",
        ),
    ])
}

#[cfg(test)]
mod tests {
    /// Both transient verification cases pass at the quick tier (slow: each runs a time loop).
    #[test]
    #[ignore = "both transient verification cases, about a minute"]
    fn quick_tier_passes() {
        let checks: Vec<_> = super::run(super::Tier::Quick)
            .unwrap()
            .into_iter()
            .chain(crate::cases::transient_steady_limit::run(super::Tier::Quick).unwrap())
            .collect();
        assert!(!checks.is_empty());
        for c in &checks {
            assert!(
                c.passed,
                "{} | {}: {:.4e} (tol {:.0e}) order {:?}",
                c.case, c.quantity, c.computed, c.tolerance, c.observed_order
            );
        }
    }
}
