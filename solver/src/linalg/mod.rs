//! Linear algebra: the face-coupled operator, its 7-point assembly, geometric multigrid and Krylov solvers.

pub mod operator;

pub use operator::{AdvectionScheme, FaceCoupledOperator};
