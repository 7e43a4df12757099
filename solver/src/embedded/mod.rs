//! Discrete operators that live on the embedded boundary (the sphere facets) rather than on grid faces.

pub mod extrapolate_to_facet;

pub use extrapolate_to_facet::{FacetExtrapolation, FacetStencils};
