//! Steady solve: multigrid-preconditioned Krylov on the assembled system, with outer deferred-correction
//! iterations when some faces are upwinded.

use super::advection::deferred_correction;
use super::{assemble_transport, TransportAssembly, TransportProblem};
use crate::linalg::{KrylovParams, MultigridParams, SolveError, SteadySolver};

/// Settings of the steady transport solve.
#[derive(Clone, Debug)]
pub struct TransportSettings {
    pub krylov: KrylovParams,
    pub multigrid: MultigridParams,
    /// Outer deferred-correction iterations at most (used only when faces are upwinded).
    pub max_outer_iterations: usize,
}

impl Default for TransportSettings {
    fn default() -> Self {
        TransportSettings {
            krylov: KrylovParams::default(),
            multigrid: MultigridParams::default(),
            max_outer_iterations: 50,
        }
    }
}

/// The steady concentration and how it was obtained.
pub struct SteadyTransport {
    /// Concentration per grid cell (molecules/m^3); zero in grid cells without fluid.
    pub concentration: Vec<f64>,
    pub assembly: TransportAssembly,
    /// Krylov iterations summed over outer iterations.
    pub iterations: usize,
    pub outer_iterations: usize,
    pub residual_history: Vec<f64>,
    pub relative_residual: f64,
}

#[derive(thiserror::Error, Debug)]
pub enum TransportError {
    #[error("the transport solve did not converge: relative residual {relative_residual:.3e} after {iterations} iterations")]
    NoConvergence { iterations: usize, relative_residual: f64, residual_history: Vec<f64> },
    #[error("the transport solve produced non-finite values (iteration {iteration})")]
    NonFinite { iteration: usize },
    #[error("the deferred-correction iterations did not settle: last relative change {change:.3e} after {outer} outer iterations")]
    OuterNoConvergence { outer: usize, change: f64 },
}

impl From<SolveError> for TransportError {
    fn from(e: SolveError) -> Self {
        match e {
            SolveError::NoConvergence { iterations, relative_residual, residual_history } => {
                TransportError::NoConvergence { iterations, relative_residual, residual_history }
            }
            SolveError::NonFinite { iteration } => TransportError::NonFinite { iteration },
        }
    }
}

/// Solves the steady transport problem.
pub fn solve_steady(
    problem: &TransportProblem,
    settings: &TransportSettings,
) -> Result<SteadyTransport, TransportError> {
    let assembly = assemble_transport(problem);
    let solver = SteadySolver::new(assembly.system.clone(), settings.multigrid.clone());
    let mut c = vec![0.0; assembly.rhs.len()];
    let first = solver.solve(&assembly.rhs, &mut c, &settings.krylov)?;
    let mut iterations = first.iterations;
    let mut history = first.residual_history.clone();
    let mut relative_residual = first.relative_residual;
    let mut outer = 1;

    if assembly.peclet.upwinded_faces > 0 {
        let d = problem.ligand.diffusivity;
        loop {
            let correction = deferred_correction(problem.geometry, problem.face_flux, d, &c);
            let rhs: Vec<f64> = assembly.rhs.iter().zip(&correction).map(|(b, k)| b + k).collect();
            let previous = c.clone();
            let info = solver.solve(&rhs, &mut c, &settings.krylov)?;
            iterations += info.iterations;
            history.extend_from_slice(&info.residual_history);
            relative_residual = info.relative_residual;
            outer += 1;
            let change = relative_change(&previous, &c);
            if change <= settings.krylov.relative_tolerance {
                break;
            }
            if outer >= settings.max_outer_iterations {
                return Err(TransportError::OuterNoConvergence { outer, change });
            }
        }
    }
    if let Some(i) = c.iter().position(|v| !v.is_finite()) {
        let _ = i;
        return Err(TransportError::NonFinite { iteration: iterations });
    }
    // Grid cells without fluid carry no concentration.
    for (value, active) in c.iter_mut().zip(&assembly.system.operator.active) {
        if !active {
            *value = 0.0;
        }
    }
    Ok(SteadyTransport {
        concentration: c,
        assembly,
        iterations,
        outer_iterations: outer,
        residual_history: history,
        relative_residual,
    })
}

fn relative_change(a: &[f64], b: &[f64]) -> f64 {
    let num: f64 = a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum();
    let den: f64 = b.iter().map(|y| y * y).sum();
    if den == 0.0 {
        0.0
    } else {
        (num / den).sqrt()
    }
}
