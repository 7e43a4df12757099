//! Linear algebra: the face-coupled operator, its 7-point assembly, geometric multigrid and Krylov solvers.
//!
//! - [`operator`]: the face-coupled operator form shared by flow and transport.
//! - [`stencil`]: its assembly into a 7-point stencil ([`Stencil7`], also exported as CSR).
//! - [`apply_operator`]: the matrix-free product straight from the face arrays (the exact f64 system).
//! - [`coarsen`], [`transfer`], [`smooth`], [`dense_lu`], [`multigrid`]: the cell-centred multigrid
//!   preconditioner (f32 levels, stored per red–black colour by `coloured_stencil`).
//! - [`bicgstab`]: right-preconditioned BiCGSTAB; [`steady_solver`]: the two put together.

pub mod apply_operator;
pub mod bicgstab;
mod coarsen;
mod coloured_stencil;
mod dense_lu;
pub mod multigrid;
pub mod operator;
pub mod real;
mod smooth;
pub mod steady_solver;
pub mod stencil;
#[cfg(any(test, feature = "test-problems"))]
pub mod test_problems;
pub mod transfer;
mod vector;

pub use apply_operator::apply_face_coupled;
pub use bicgstab::{bicgstab, bicgstab_with_work, BicgstabWork, KrylovParams, SolveError, SolveInfo};
pub use multigrid::{Cycle, MultigridParams};
pub use operator::{AdvectionScheme, FaceCoupledOperator};
pub use steady_solver::{system_memory_bytes, LinearSystem, SteadySolver};
pub use stencil::Stencil7;
pub use transfer::Prolongation;
