//! Steady transport of the secreted ligand:
//!
//! ```text
//! ∇·(u c − D∇c) = −k c   in the fluid,
//! −D ∂c/∂n = ν_i/(4πa_i²) − κ c   on the surface of cell i   (n into the cell),
//! ```
//!
//! discretised by conservative finite volumes on the embedded-boundary (cut-cell) grid. Each physical term has
//! its own file; [`assemble_transport`] adds them into one face-coupled operator, [`solve_steady`] solves it.

pub mod advection;
pub mod assemble_transport;
pub mod boundary_layer;
pub mod chamber_faces;
pub mod decay;
pub mod diffusion;
pub mod far_field_patches;
pub mod far_field_sources;
pub mod solve_steady;
pub mod surface_exchange;
pub mod transient;

pub use assemble_transport::{assemble_transport, TransportAssembly, TransportTerms};
pub use solve_steady::{solve_steady, SteadyTransport, TransportError, TransportParams};

use crate::problem::{ChamberBoundaries, LigandParameters};
use mesh::{EmbeddedGeometry, Layout};

/// Everything the transport needs to know about one case.
#[derive(Clone, Copy)]
pub struct TransportProblem<'a> {
    pub geometry: &'a EmbeddedGeometry,
    pub stencils: &'a crate::embedded::FacetStencils,
    pub layout: &'a Layout,
    pub boundaries: ChamberBoundaries,
    pub ligand: LigandParameters,
    /// Signed volumetric flux through every face (m^3/s), positive towards increasing coordinate, boundary
    /// faces included; from the flow solver (all zero without flow).
    pub face_flux: &'a [Vec<f64>; 3],
    /// Undisturbed superficial speed along +x (m/s), used by far-field faces.
    pub far_field_speed: f64,
}
