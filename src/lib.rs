//! The plumefield application: case file, command-line commands and output writers. Numerics live in the
//! `solver` crate, geometry in `mesh`, analytic references in `validation`.

pub mod case;
pub mod commands;
pub mod exit;
pub mod io;
