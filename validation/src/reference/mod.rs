//! Analytic reference solutions, one file per published result.
//!
//! Each file's module doc names its source (author, year, journal, equation or section) and marks, as
//! `shared/REFERENCES.md` does, what was checked against the publication (**[found]**), what is recalled
//! (**[memory]**) and what was derived for this project (**[derived]**). Every public function takes SI
//! arguments and returns SI values unless its doc says it works in a stated dimensionless form.
//!
//! The numerical helpers (`special`, `quadrature`) are general-purpose and carry no physics.

mod axisymmetric;
pub mod brinkman_channel;
pub mod brinkman_sphere;
pub mod counting_noise;
pub mod darcy_sphere;
pub mod hasimoto;
pub mod low_peclet;
pub mod mean_field;
pub mod percus_yevick;
pub mod point_source_stream;
pub mod quadrature;
pub mod special;
pub mod sphere_steady;
pub mod sphere_transient;
pub mod thin_boundary_layer;

use thiserror::Error;

/// Why a reference solution could not be evaluated.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum ReferenceError {
    /// A physical parameter is outside the range where the formula holds (e.g. a negative radius).
    #[error("parameter `{name}` = {value} is invalid: it must be {requirement}")]
    InvalidParameter { name: &'static str, value: f64, requirement: &'static str },
    /// A quadrature did not reach its tolerance; carries the last estimate and the last change between levels.
    #[error("quadrature did not converge: estimate {estimate}, last change {change}")]
    QuadratureNoConvergence { estimate: f64, change: f64 },
}

/// Checks `value > 0` (and finite), naming the parameter otherwise.
pub(crate) fn require_positive(name: &'static str, value: f64) -> Result<f64, ReferenceError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(ReferenceError::InvalidParameter { name, value, requirement: "finite and > 0" })
    }
}

/// Checks `value >= 0` (and finite), naming the parameter otherwise.
pub(crate) fn require_non_negative(name: &'static str, value: f64) -> Result<f64, ReferenceError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(ReferenceError::InvalidParameter { name, value, requirement: "finite and >= 0" })
    }
}

/// Checks that `value` is finite, naming the parameter otherwise.
pub(crate) fn require_finite(name: &'static str, value: f64) -> Result<f64, ReferenceError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(ReferenceError::InvalidParameter { name, value, requirement: "finite" })
    }
}

/// Relative difference `|a − b| / |b|` used by the tests (absolute when `b = 0`).
#[cfg(test)]
pub(crate) fn rel_diff(a: f64, b: f64) -> f64 {
    if b == 0.0 {
        a.abs()
    } else {
        ((a - b) / b).abs()
    }
}
