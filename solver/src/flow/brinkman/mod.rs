//! Brinkman and Stokes flow around the cells on the staggered (MAC) grid:
//!
//! ```text
//! −μ_e ∇²u + (μ/K) u + ∇p = 0,   ∇·u = 0   in the fluid,   u = 0 on every cell surface,
//! ```
//!
//! Stokes flow being the limit K → ∞ (μ/K = 0). Velocity components live on the faces normal to their axis
//! ([`staggered_grid`]), pressure at grid-cell centres. No slip on the spheres: momentum links that cross a sphere
//! surface end on it ([`assemble_momentum`], cut positions from the exact spheres via [`sphere_index`]).
//! Continuity uses the fluxes `h² u_f` of the faces whose centres are in the fluid ([`pressure_gradient`]); those
//! fluxes are what the transport advects, divergence-free to the solver tolerance.
//! The coupled system is solved by mixed-precision iterative refinement: f64 residuals around corrections by
//! right-preconditioned BiCGSTAB in f32 without a stored shadow vector (flexible GMRES in f64 on request, both
//! from `crate::linalg::krylov`), with a block-triangular preconditioner: multigrid on each velocity component
//! and a Cahouet–Chabard Schur approximation with a cut-cell-weighted viscous part ([`saddle_system`]);
//! products run on compact rows ([`momentum_rows`]). Cell drag comes from the discrete momentum balance
//! ([`surface_force`]).

pub mod assemble_momentum;
pub mod chamber_velocity;
pub mod inlet_profile;
pub mod momentum_rows;
pub mod pressure_gradient;
pub mod resolution;
pub mod saddle_system;
pub mod solve_brinkman;
pub mod sphere_index;
pub mod staggered_grid;
pub mod surface_force;
pub mod velocity_multigrid;

#[cfg(test)]
mod tests;

pub use chamber_velocity::VelocityData;
pub use resolution::ScreeningLengthWarning;
pub use solve_brinkman::{
    solve_brinkman, BrinkmanParams, BrinkmanSolution, BrinkmanStageSeconds, FlowKrylov,
};
pub use surface_force::SurfaceForces;

use crate::linalg::SolveError;
use crate::problem::MediumModel;

/// The viscous medium: Brinkman (`permeability` Some) or Stokes (None).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BrinkmanMedium {
    /// Fluid viscosity μ (Pa s).
    pub viscosity: f64,
    /// Brinkman effective viscosity μ_e (Pa s); μ for Stokes flow.
    pub effective_viscosity: f64,
    /// Permeability K (m²); None for Stokes flow.
    pub permeability: Option<f64>,
}

impl BrinkmanMedium {
    /// The medium of a Brinkman or Stokes model; None for Darcy.
    pub fn from_model(model: MediumModel) -> Option<Self> {
        match model {
            MediumModel::Brinkman { viscosity, permeability, effective_viscosity } => {
                Some(BrinkmanMedium { viscosity, effective_viscosity, permeability: Some(permeability) })
            }
            MediumModel::Stokes { viscosity } => {
                Some(BrinkmanMedium { viscosity, effective_viscosity: viscosity, permeability: None })
            }
            MediumModel::Darcy { .. } => None,
        }
    }

    /// μ/K (Pa s/m²), zero for Stokes flow.
    pub fn resistivity(&self) -> f64 {
        self.permeability.map_or(0.0, |k| self.viscosity / k)
    }

    /// Screening length `√(μ_e K/μ)` (m); None for Stokes flow.
    pub fn screening_length(&self) -> Option<f64> {
        self.permeability.map(|k| (self.effective_viscosity * k / self.viscosity).sqrt())
    }

    fn validate(&self) -> Result<(), BrinkmanError> {
        let positive = |v: f64| v > 0.0 && v.is_finite();
        if !positive(self.viscosity)
            || !positive(self.effective_viscosity)
            || !self.permeability.is_none_or(positive)
        {
            return Err(BrinkmanError::InvalidMedium(*self));
        }
        Ok(())
    }
}

#[derive(thiserror::Error, Debug)]
pub enum BrinkmanError {
    #[error("the Brinkman/Stokes flow solve did not converge: relative residual {relative_residual:.3e} after {iterations} iterations")]
    NoConvergence { iterations: usize, relative_residual: f64, residual_history: Vec<f64> },
    #[error("the Brinkman/Stokes flow solve produced non-finite values (iteration {iteration})")]
    NonFinite { iteration: usize },
    #[error("the flow has no way through the chamber (no fluid face carries a velocity unknown)")]
    Blocked,
    #[error("invalid medium: viscosities and permeability must be positive and finite ({0:?})")]
    InvalidMedium(BrinkmanMedium),
    #[error("internal error in the Brinkman/Stokes solver: {0}")]
    Internal(&'static str),
}

impl BrinkmanError {
    fn from_solve(e: SolveError) -> Self {
        match e {
            SolveError::NoConvergence { iterations, relative_residual, residual_history } => {
                BrinkmanError::NoConvergence { iterations, relative_residual, residual_history }
            }
            SolveError::NonFinite { iteration } => BrinkmanError::NonFinite { iteration },
        }
    }
}
