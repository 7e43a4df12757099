//! Linear algebra: the face-coupled operator, its 7-point assembly, geometric multigrid and Krylov solvers.
//!
//! - [`operator`]: the face-coupled operator form shared by flow and transport.
//! - [`stencil`]: its assembly into a 7-point stencil ([`Stencil7`], also exported as CSR).
//! - [`apply_operator`]: the matrix-free product straight from the face arrays (the exact f64 system), also in
//!   a packed form that stores only the conductances and sinks of irregular cells ([`PackedOperator`]).
//! - [`coarsen`], [`transfer`], [`smooth`], [`dense_lu`], [`multigrid`]: the cell-centred multigrid
//!   preconditioner (f32 levels with bfloat16 off-diagonals, stored per red–black colour by `coloured_stencil`).
//! - [`krylov`]: the Krylov methods (BiCGSTAB in f64 or f32, flexible GMRES, mixed-precision refinement) behind
//!   the [`LinearOperator`] trait, on the fixed-order vector kernels of `vector` (the same bits at any thread
//!   count).
//! - [`sparse_correction`]: the cut-cell correction rows added to the face-coupled product.
//! - [`steady_solver`]: BiCGSTAB on the operator plus correction, preconditioned by one multigrid cycle.

pub mod apply_operator;
mod coarsen;
mod coloured_stencil;
mod dense_lu;
pub mod krylov;
pub mod multigrid;
pub mod operator;
pub mod real;
mod smooth;
pub mod sparse_correction;
pub mod steady_solver;
pub mod stencil;
#[cfg(any(test, feature = "test-problems"))]
pub mod test_problems;
pub mod transfer;
mod vector;

pub use apply_operator::{apply_face_coupled, PackedOperator};
pub(crate) use coarsen::coarsen_operator;
pub use krylov::{
    bicgstab, bicgstab_until, gmres, refine_until, store_scaled_residual, BicgstabParams, BicgstabWork,
    GmresParams, KrylovParams, LinearOperator, OuterResidual, RefinementParams, RefinementWork,
    RightHandSide, Shadow, SolveError, SolveInfo, SparseVector,
};
pub use multigrid::{Cycle, MultigridParams};
pub use operator::{AdvectionScheme, FaceCoupledOperator};
pub use sparse_correction::SparseCorrection;
pub use steady_solver::{system_memory_bytes, LinearSystem, SteadySolver};
pub use stencil::Stencil7;
pub use transfer::Prolongation;
