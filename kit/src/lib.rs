//! Small numerics shared by every layer of plumefield, one of each: sample quantiles, the error function,
//! Gauss–Legendre quadrature, the seeded pseudo-random generator, SHA-256 stamps, observed orders of
//! convergence and `/proc` resource meters.
//!
//! A leaf crate: it depends on no other crate of the workspace, so the mesh, the solver, the validation cases
//! and the binary may all use it. The independent reference implementations in the validation crate do not
//! use it on purpose: a check shares no code with what it checks.

pub mod convergence;
pub mod hash;
pub mod meter;
pub mod quadrature;
pub mod quantile;
pub mod random;
pub mod special;

pub use convergence::observed_order;
pub use hash::sha256_hex;
pub use quadrature::GaussLegendre;
pub use quantile::{quantile, quantile_sorted, sorted_without_nan};
pub use random::Xoshiro256StarStar;
pub use special::{erfc, erfcx};
