//! Steady solve: multigrid-preconditioned Krylov on the assembled system. The operator is linear at every
//! Péclet number (`advection`), so one solve gives the answer.

use super::{assemble_transport, TransportProblem, TransportTerms};
use crate::linalg::{KrylovParams, MultigridParams, SolveError, SteadySolver};

/// Parameters of the steady transport solve.
#[derive(Clone, Debug, Default)]
pub struct TransportParams {
    pub krylov: KrylovParams,
    pub multigrid: MultigridParams,
}

/// The steady concentration and how it was obtained.
pub struct SteadyTransport {
    /// Concentration per grid cell (molecules/m^3); zero in grid cells without fluid.
    pub concentration: Vec<f64>,
    /// The assembly's per-term forms (the operator itself lives in `solver`).
    pub assembly: TransportTerms,
    /// The solver of this solve (packed operator and multigrid hierarchy, no work vectors), kept for more
    /// right-hand sides on the same operator (the self/neighbour split); take it, or drop it, when no more
    /// are needed, as it is the largest thing a solved case holds.
    pub solver: Option<SteadySolver>,
    /// Krylov iterations.
    pub iterations: usize,
    pub residual_history: Vec<f64>,
    pub relative_residual: f64,
}

#[derive(thiserror::Error, Debug)]
pub enum TransportError {
    #[error("the transport solve did not converge: relative residual {relative_residual:.3e} after {iterations} iterations")]
    NoConvergence { iterations: usize, relative_residual: f64, residual_history: Vec<f64> },
    #[error("the transport solve produced non-finite values (iteration {iteration})")]
    NonFinite { iteration: usize },
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
    params: &TransportParams,
) -> Result<SteadyTransport, TransportError> {
    let (system, rhs, assembly) = assemble_transport(problem).into_parts(problem.ligand.decay_rate);
    // The solver takes the system (no second copy of the operator arrays) and is kept for further right-hand
    // sides; the right-hand side of the total is not needed after the solve.
    let solver = SteadySolver::new(system, params.multigrid.clone());
    let mut c = vec![0.0; rhs.len()];
    let info = solver.solve(&rhs, &mut c, &params.krylov)?;
    drop(rhs);
    solver.release_work();
    if c.iter().any(|v| !v.is_finite()) {
        return Err(TransportError::NonFinite { iteration: info.iterations });
    }
    // Grid cells without fluid carry no concentration.
    for (value, active) in c.iter_mut().zip(solver.active()) {
        if !active {
            *value = 0.0;
        }
    }
    Ok(SteadyTransport {
        concentration: c,
        assembly,
        solver: Some(solver),
        iterations: info.iterations,
        residual_history: info.residual_history,
        relative_residual: info.relative_residual,
    })
}
