//! Pure numerics of plumefield: no file I/O, no printing.
//!
//! Location convention (used by every module): scalars (concentration, pressure) live at grid-cell centres,
//! flat index `i + nx * (j + ny * k)`; fluxes and velocities live on faces, indexed as in `mesh::Grid::face_index`.
//! A face value along axis `a` is positive when it points towards increasing coordinate `a`.
//!
//! Layers, lowest first (a module uses only its own layer and those below; `scripts/check-layers` checks):
//!
//! - [`problem`], [`boundaries`]: the physical problem and the chamber's boundary conditions.
//! - [`linalg`]: the face-coupled operator form, its 7-point assembly, geometric multigrid and Krylov solvers.
//! - [`embedded`]: extrapolation of cell values to the facets of the cut cells.
//! - [`flow`]: Darcy, Brinkman or Stokes flow → face fluxes, pressure, per-cell drag.
//! - [`transport`]: advection–diffusion–uptake–decay of the secreted ligand, steady and one implicit step.
//! - [`post`]: per-cell surface integrals, mass balance, counting noise, the transient sensing window.
//! - [`solve_case`], [`solve_transient`]: one steady or transient case end to end.

pub mod boundaries;
pub mod embedded;
pub mod flow;
pub mod linalg;
pub mod post;
pub mod problem;
pub mod solve_case;
pub mod solve_transient;
pub mod transport;
