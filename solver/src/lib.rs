//! Pure numerics of plumefield: no file I/O, no printing.
//!
//! Location convention (used by every module): scalars (concentration, pressure) live at grid-cell centres,
//! flat index `i + nx * (j + ny * k)`; fluxes and velocities live on faces, indexed as in `mesh::Grid::face_index`.
//! A face value along axis `a` is positive when it points towards increasing coordinate `a`.
//!
//! - [`linalg`]: the face-coupled operator form, its 7-point assembly, geometric multigrid and Krylov solvers.
//! - [`flow`]: Darcy (and later Brinkman/Stokes) flow → face fluxes, pressure, per-cell drag.
//! - [`transport`]: steady advection–diffusion–uptake–decay of the secreted ligand.
//! - [`post`]: per-cell surface integrals, mass balance, counting noise.

pub mod boundaries;
pub mod embedded;
pub mod flow;
pub mod linalg;
pub mod post;
pub mod problem;
pub mod solve_case;
pub mod transport;
