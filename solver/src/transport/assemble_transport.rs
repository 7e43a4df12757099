//! Adds diffusion, advection, decay, surface exchange and chamber-face terms into one linear system
//! `A c = b` (rows are the molecule balance of each grid cell, molecules/s).

use super::advection::{fit_high_peclet_faces, PecletReport};
use super::chamber_faces::{boundary_exchanges, BoundaryExchange};
use super::decay::decay_sink;
use super::diffusion::diffusive_conductance;
use super::surface_exchange::{facet_exchanges, FacetExchange};
use super::TransportProblem;
use crate::boundaries::zero_boundary_faces;
use crate::linalg::{AdvectionScheme, FaceCoupledOperator, LinearSystem};

/// The assembled system and the per-term forms that post-processing evaluates on the solution (so the mass
/// balance uses exactly the discrete fluxes that were solved for).
pub struct TransportAssembly {
    pub system: LinearSystem,
    pub rhs: Vec<f64>,
    pub facets: Vec<FacetExchange>,
    pub boundary: Vec<BoundaryExchange>,
    /// Decay sink per grid cell (m^3/s): decay rate · fluid volume.
    pub decay: Vec<f64>,
    pub peclet: PecletReport,
    /// Wall time of the far-field faces' coefficients (s; 0 without such faces): measured, not a result.
    pub far_field_seconds: f64,
}

/// The per-term forms of an assembly that post-processing evaluates on the solution (mass balance, sensing,
/// the self/neighbour split's right-hand sides): everything but the operator and the right-hand side, which the
/// solve consumes, and the decay sinks, which follow from the geometry (`decay::decay_sinks`).
pub struct TransportTerms {
    pub facets: Vec<FacetExchange>,
    pub boundary: Vec<BoundaryExchange>,
    /// Bulk decay rate (1/s) of the decay sinks.
    pub decay_rate: f64,
    pub peclet: PecletReport,
    /// Wall time of the far-field faces' coefficients (s; 0 without such faces): measured, not a result.
    pub far_field_seconds: f64,
}

impl TransportAssembly {
    /// The system and right-hand side for a solver, and the forms kept for post-processing.
    pub fn into_parts(self, decay_rate: f64) -> (LinearSystem, Vec<f64>, TransportTerms) {
        let TransportAssembly { system, rhs, facets, boundary, peclet, far_field_seconds, .. } = self;
        (system, rhs, TransportTerms { facets, boundary, decay_rate, peclet, far_field_seconds })
    }
}

pub fn assemble_transport(problem: &TransportProblem) -> TransportAssembly {
    let geometry = problem.geometry;
    let grid = &geometry.grid;
    let n = grid.len();
    let d = problem.ligand.diffusivity;

    let mut conductance = diffusive_conductance(geometry, d);
    let peclet = fit_high_peclet_faces(geometry, problem.face_flux, d, &mut conductance);
    let decay = decay_sink(geometry, problem.ligand.decay_rate);
    let mut sink = decay.clone();
    let mut rhs = vec![0.0; n];

    let (boundary, far_field_seconds) = boundary_exchanges(
        geometry,
        problem.layout,
        &problem.boundaries,
        &problem.ligand,
        problem.face_flux,
        problem.far_field_speed,
    );
    for b in &boundary {
        sink[b.grid_cell] += b.coefficient;
        rhs[b.grid_cell] += b.inflow_constant;
    }

    let facets = facet_exchanges(geometry, problem.stencils, problem.layout, d, problem.ligand.uptake);
    let mut triplets = sprs::TriMat::new((n, n));
    for (facet, ex) in geometry.facets.iter().zip(&facets) {
        let row = facet.grid_cell;
        rhs[row] += ex.secretion - ex.uptake.constant;
        for &(col, w) in &ex.uptake.terms {
            if col == row {
                sink[row] += w;
            } else if w != 0.0 {
                triplets.add_triplet(row, col, w);
            }
        }
    }
    let correction = (triplets.nnz() > 0).then(|| triplets.to_csr());

    // Boundary faces are folded into sink/rhs above; zero them in the operator so they never couple.
    let mut flux = problem.face_flux.clone();
    for axis in mesh::Axis::ALL {
        let a = axis.index();
        if !geometry.periodic[a] {
            zero_boundary_faces(grid, axis, &mut conductance[a]);
            zero_boundary_faces(grid, axis, &mut flux[a]);
        }
    }
    let active = geometry.volume_fraction.iter().map(|&phi| phi > 0.0).collect();
    let operator = FaceCoupledOperator {
        shape: grid.shape,
        periodic: geometry.periodic,
        conductance,
        flux,
        sink,
        active,
    };
    TransportAssembly {
        system: LinearSystem { operator, scheme: AdvectionScheme::Central, correction },
        rhs,
        facets,
        boundary,
        decay,
        peclet,
        far_field_seconds,
    }
}
