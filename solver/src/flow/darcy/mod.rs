//! Darcy flow `u = −(K/μ)∇p`, `∇·u = 0` in the fluid, no flux through the cells.
//!
//! The pressure equation `∇·((K/μ)∇p) = 0` uses the same face-coupled operator as diffusion (two-point fluxes
//! weighted by face apertures), so the face fluxes `Q_f = (K/μ)·aperture·h·(p_L − p_R)` are exactly
//! divergence-free up to the solver tolerance. One file per piece, in the order of [`solve_darcy`]:
//!
//! - [`chamber_pressure`]: the chamber faces — inlet: superficial velocity U normal to the face (flux U·A into
//!   the chamber); outlet: p = 0 on the face; far field: p = −(μ/K) U (x − x_c), the undisturbed uniform stream
//!   (x_c the chamber centre); wall, symmetry: no flux;
//! - [`periodic_drive`]: periodic along x — the mean pressure gradient that yields the mean velocity U is found
//!   by solving with a unit pressure jump per period and scaling (the problem is linear);
//! - [`assemble_pressure`]: the face-coupled pressure operator;
//! - [`face_flux`]: the face fluxes from the solved pressure.

pub mod assemble_pressure;
pub mod chamber_pressure;
pub mod face_flux;
pub mod periodic_drive;
pub mod solve_darcy;

pub use solve_darcy::solve_darcy;

use crate::linalg::SolveError;

#[derive(thiserror::Error, Debug)]
pub enum DarcyError {
    #[error("the Darcy pressure solve did not converge: relative residual {relative_residual:.3e} after {iterations} iterations")]
    NoConvergence { iterations: usize, relative_residual: f64, residual_history: Vec<f64> },
    #[error("the Darcy pressure solve produced non-finite values (iteration {iteration})")]
    NonFinite { iteration: usize },
    #[error(
        "the flow has no way through the chamber (no open inlet/outlet/far-field/periodic face carries flux)"
    )]
    Blocked,
}

impl From<SolveError> for DarcyError {
    fn from(e: SolveError) -> Self {
        match e {
            SolveError::NoConvergence { iterations, relative_residual, residual_history } => {
                DarcyError::NoConvergence { iterations, relative_residual, residual_history }
            }
            SolveError::NonFinite { iteration } => DarcyError::NonFinite { iteration },
        }
    }
}
