//! The plumefield application: case file, command-line commands, output writers, figures and sweeps. Numerics
//! live in the `solver` crate, geometry in `mesh`, analytic references in `validation`.

pub mod case;
pub mod commands;
pub mod engine;
pub mod exit;
pub mod figures;
pub mod forecast;
pub mod io;
pub mod outputs;
pub mod sensing;
pub mod sweep;
