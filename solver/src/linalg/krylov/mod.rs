//! Krylov methods for nonsymmetric `A x = b`, preconditioned on the right, on the shared vector kernels
//! (`super::vector`: fixed-order reductions, so every method gives the same bits at any thread count). BiCGSTAB
//! runs on f64 or f32 vectors (f64 scalars and sums either way).
//!
//! - [`LinearOperator`]: what a method needs of `A` (`apply`); closures `Fn(&[f64], &mut [f64])` are operators.
//! - [`bicgstab`]: BiCGSTAB, its shadow vector and kept work vectors chosen by the caller.
//! - [`gmres`]: restarted flexible GMRES.
//! - [`RightHandSide`]: a dense or sparse `b` (the flow system's is nonzero only near driven faces).
//! - [`refine_until`]: mixed-precision iterative refinement, f64 residuals around f32 BiCGSTAB corrections.
//!
//! Every method takes a `Params` with `Default`, returns [`SolveInfo`] (iterations, residual history) or a
//! [`SolveError`] that carries the residual it stopped at.

pub mod bicgstab;
pub mod gmres;
pub mod refinement;
pub mod right_hand_side;

pub use bicgstab::{bicgstab, bicgstab_until, BicgstabParams, BicgstabWork, Shadow};
pub use gmres::{gmres, GmresParams};
pub use refinement::{refine_until, store_scaled_residual, OuterResidual, RefinementParams, RefinementWork};
pub use right_hand_side::{RightHandSide, SparseVector};

use thiserror::Error;

/// `y = A x` on vectors of f64 (default) or f32.
pub trait LinearOperator<T = f64> {
    fn apply(&self, x: &[T], y: &mut [T]);
}

impl<T, F: Fn(&[T], &mut [T])> LinearOperator<T> for F {
    fn apply(&self, x: &[T], y: &mut [T]) {
        self(x, y)
    }
}

/// Stopping rule of a Krylov iteration.
#[derive(Clone, Debug, PartialEq)]
pub struct KrylovParams {
    /// Target of `‖b − A x‖₂ / ‖b‖₂`; default 1e-8.
    pub relative_tolerance: f64,
    /// Maximum number of iterations (BiCGSTAB: two preconditioner applications each); default 300.
    pub max_iterations: usize,
}

impl Default for KrylovParams {
    fn default() -> Self {
        KrylovParams { relative_tolerance: 1e-8, max_iterations: 300 }
    }
}

/// What a converged solve reports.
#[derive(Clone, Debug, PartialEq)]
pub struct SolveInfo {
    /// Iterations (a BiCGSTAB half iteration that converged counts as one).
    pub iterations: usize,
    /// True `‖b − A x‖₂ / ‖b‖₂` at return.
    pub relative_residual: f64,
    /// Relative residual before the first iteration and after every iteration.
    pub residual_history: Vec<f64>,
}

impl SolveInfo {
    /// The answer for `b = 0`: `x = 0`, no iteration.
    pub(crate) fn zero_right_hand_side() -> Self {
        SolveInfo { iterations: 0, relative_residual: 0.0, residual_history: vec![0.0] }
    }
}

/// Why a solve failed; carries the state it stopped in.
#[derive(Error, Debug, Clone, PartialEq)]
pub enum SolveError {
    #[error("linear solver did not converge in {iterations} iterations (relative residual {relative_residual:.3e})")]
    NoConvergence { iterations: usize, relative_residual: f64, residual_history: Vec<f64> },
    #[error("linear solver produced a non-finite value at iteration {iteration}")]
    NonFinite { iteration: usize },
}
