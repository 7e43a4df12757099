//! The pieces of one implicit time step of the ligand transport
//!
//! ```text
//! φ ∂c/∂t + ∇·(u c − D∇c) = −k c   in the fluid,   with the surface, chamber and far-field conditions in time,
//! ```
//!
//! by variable-step BDF2 ([`bdf`]) on the *assembled steady operator*: the storage term `(α₀/Δt)·φh³` is added
//! to the operator's diagonal (`FaceCoupledOperator::sink`), the history to the right-hand side, and each step
//! is one multigrid-preconditioned Krylov solve ([`step_solver`]) warm-started from the best combination of the
//! last solutions ([`guess_projection`]). Far-field faces follow the switched-on point-source solution
//! ([`far_field_switch_on`]); secretion starts per cell ([`sources`]); every step closes its molecule balance
//! ([`balance`]). The time loop that puts them together, with events, outputs and sensing, is
//! `crate::solve_transient`.

pub mod balance;
pub mod bdf;
pub mod far_field_switch_on;
pub mod guess_projection;
pub mod sources;
pub mod step_solver;

pub use balance::StepBalance;
