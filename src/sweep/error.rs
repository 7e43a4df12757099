//! Errors of a sweep file and of its expansion into cases. Each one is a sentence that names the sweep file
//! and, where it is about one, the axis (`sweep.toml: axis flow.mean_velocity: ...`).

use std::path::PathBuf;

use crate::case::CaseError;

/// Why a sweep cannot be expanded or run. Every variant is a user input error (exit code 2).
#[derive(Debug, thiserror::Error)]
pub enum SweepError {
    /// The sweep file cannot be read.
    #[error("cannot read sweep file {}: {error}", path.display())]
    Read { path: PathBuf, error: std::io::Error },
    /// Not valid TOML, or not the shape of a sweep file.
    #[error("{}: {message}", path.display())]
    Syntax { path: PathBuf, message: String },
    /// A top-level key of the sweep file has a bad value.
    #[error("{}: {key}: {message}", path.display())]
    Invalid { path: PathBuf, key: String, message: String },
    /// An axis cannot be expanded (unknown unit, empty range, mismatched lengths, a key the base case
    /// cannot hold).
    #[error("{}: axis {key}: {message}", path.display())]
    Axis { path: PathBuf, key: String, message: String },
    /// The base case itself is invalid.
    #[error("{}: the base case is invalid", path.display())]
    Base {
        path: PathBuf,
        #[source]
        source: Box<CaseError>,
    },
    /// An expanded case is invalid because of the value an axis put in it.
    #[error("{}: axis {key} = {value} (case {id}) gives an invalid case", path.display())]
    AxisCase {
        path: PathBuf,
        key: String,
        value: String,
        id: String,
        #[source]
        source: Box<CaseError>,
    },
    /// An expanded case is invalid for a reason no single axis explains.
    #[error("{}: case {id} ({parameters}) is invalid", path.display())]
    Case {
        path: PathBuf,
        id: String,
        parameters: String,
        #[source]
        source: Box<CaseError>,
    },
}
