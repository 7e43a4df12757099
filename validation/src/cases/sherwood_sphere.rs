//! Uptake of an absorbing sphere in Stokes flow at high Péclet number against the thin-boundary-layer result
//! `Sh = 0.991 Pe^{1/3} + 0.922` (diameter-based; Acrivos & Goddard 1965 [memory], leading constant derived in
//! `reference::thin_boundary_layer`), with the leading term scaled by the box's shear factor.
//!
//! Setup: one absorbing sphere (no secretion) off the grid in a ±`half_width`·a box. The flow is Stokes with
//! far-field faces (the uniform stream on the box); the ligand enters at c∞ through the upstream face, leaves
//! by advection through the downstream face, and the four side faces hold c∞ (inlet-type Dirichlet faces). The
//! speed is fixed and the diffusivity sets `Pe = U d / D`, so one flow serves every Péclet number of a grid.
//! With the uptake Q (molecules/s), `Sh = Q / (2π a D c∞)`.
//!
//! The box: the uniform stream imposed at ±6a raises the drag above 6πμaU (by the factor K the solve gives), and
//! the wall shear with it; the leading term scales as shear^{1/3}, so the reference is
//! `0.991 (K Pe)^{1/3} + 0.922` (an approximation: it assumes the box scales the shear without changing its
//! shape).
//!
//! What limits the agreement: the boundary layer is `δ ≈ d/Sh`, a twelfth of the diameter at Pe = 1000, so
//! a/h = 8 puts about 1.3 spacings across it; faces beside the sphere above cell Péclet 2 carry the fitted flux
//! (first order across the stream); the absorbing closure is first order (`transport::surface_exchange`).
//!
//! The study on a/h = 4, 6, 8, 10, 12 at Pe = 100, 300, 1000 is in `bench/RECORDS.md`.
//!
//! The grids converge: from a/h = 10 to 12, Sh moves by 0.1–0.9 % at every Péclet number (Pe = 1000: 13.85,
//! 13.83). At Pe = 100 the converged value matches the box-corrected reference within 0.2 %; at Pe = 1000 it
//! lies 13.6 % above it, a gap that refinement no longer closes: it measures the reference's box model (the
//! drag ratio^(1/3) as the shear factor), which is too simple for a sphere confined at ±6a, not the grid. The
//! full tier checks a/h = 8 against that model with the tolerances below. The earlier limited upwind-biased
//! scheme (where its outer iterations settled, a/h = 6) gave 5.979, 8.006, 10.66: −2.7, −5.3, −12.4 % on the
//! same references, with 118–530 Krylov iterations against 12–15 here.

use super::setup::isolated_sphere;
use super::{Check, Tier, VerifyError};
use crate::reference::thin_boundary_layer;
use mesh::EmbeddedGeometry;
use solver::embedded::FacetStencils;
use solver::flow::FlowField;
use solver::linalg::KrylovParams;
use solver::post::mass_balance;
use solver::problem::{
    ChamberBoundaries, ChamberFace, FlowParameters, LigandParameters, MediumModel, SurfaceUptake,
};
use solver::solve_case::{solve_flow, SteadyCase};
use solver::transport::{solve_steady, TransportParams, TransportProblem};

const RADIUS: f64 = 5e-6;
const SPEED: f64 = 1e-4;
const FAR_CONCENTRATION: f64 = 1.0;
const VISCOSITY: f64 = 1e-3;
const SOURCE: &str =
    "Acrivos & Goddard 1965 (J. Fluid Mech. 23), Sh = 0.991 Pe^(1/3) [memory; constant derived]";

/// One solve of the absorbing sphere.
#[derive(Clone, Copy, Debug)]
pub struct SherwoodSample {
    pub peclet: f64,
    pub radius_in_spacings: f64,
    pub sherwood: f64,
    /// Relative error of the global molecule balance.
    pub mass_balance: f64,
    pub max_cell_peclet: f64,
    /// Largest cell Péclet number on the faces of grid cells cut by the sphere.
    pub surface_peclet: f64,
    /// Drag over Stokes's `6πμaU`: the box and the grid raise the wall shear by about this factor, and Sh
    /// scales as shear^{1/3} in the thin-boundary-layer limit.
    pub drag_ratio: f64,
    pub krylov_iterations: usize,
}

/// A Stokes flow past one sphere in a far-field box, solved once per grid.
pub struct SphereInStream {
    layout: mesh::Layout,
    geometry: EmbeddedGeometry,
    stencils: FacetStencils,
    flow: FlowField,
    radius_in_spacings: f64,
}

impl SphereInStream {
    pub fn solve(radius_in_spacings: f64, half_width: f64) -> Result<Self, VerifyError> {
        let (grid, layout) = isolated_sphere(RADIUS, radius_in_spacings, half_width, 0.0);
        let boundaries = ChamberBoundaries::new([[ChamberFace::FarField; 2]; 3]);
        let geometry = EmbeddedGeometry::build(&grid, &layout, boundaries.periodic_axes());
        let stencils = FacetStencils::build(&geometry);
        let case = SteadyCase {
            grid: &grid,
            layout: &layout,
            boundaries,
            flow: FlowParameters {
                medium: MediumModel::Stokes { viscosity: VISCOSITY },
                mean_velocity: SPEED,
            },
            ligand: ligand(1e-10),
            integration_time: 1.0,
            krylov: KrylovParams { relative_tolerance: 1e-10, max_iterations: 500 },
        };
        let (flow, _) = solve_flow(&geometry, &stencils, &case, SPEED)?;
        Ok(SphereInStream { layout, geometry, stencils, flow, radius_in_spacings })
    }

    /// The uptake at `peclet = U d / D`.
    pub fn sherwood(&self, peclet: f64) -> Result<SherwoodSample, VerifyError> {
        let diffusivity = SPEED * 2.0 * RADIUS / peclet;
        let [inlet, outlet] = [ChamberFace::Inlet, ChamberFace::Outlet];
        let problem = TransportProblem {
            geometry: &self.geometry,
            stencils: &self.stencils,
            layout: &self.layout,
            boundaries: ChamberBoundaries::new([[inlet, outlet], [inlet, inlet], [inlet, inlet]]),
            ligand: ligand(diffusivity),
            face_flux: &self.flow.face_flux,
            far_field_speed: SPEED,
        };
        let params = TransportParams {
            krylov: KrylovParams { relative_tolerance: 1e-11, max_iterations: 2000 },
            ..TransportParams::default()
        };
        let solved = solve_steady(&problem, &params).map_err(solver::solve_case::CaseSolveError::from)?;
        let c = &solved.concentration;
        let uptake: f64 = solved.assembly.facets.iter().map(|f| f.uptake.evaluate(c)).sum();
        Ok(SherwoodSample {
            peclet,
            radius_in_spacings: self.radius_in_spacings,
            sherwood: uptake / (2.0 * std::f64::consts::PI * RADIUS * diffusivity * FAR_CONCENTRATION),
            mass_balance: mass_balance(&solved.assembly, &self.geometry, c).relative_error,
            max_cell_peclet: solved.assembly.peclet.max_cell_peclet,
            surface_peclet: solved.assembly.peclet.surface_peclet,
            drag_ratio: self.flow.drag[0][0] / (6.0 * std::f64::consts::PI * VISCOSITY * RADIUS * SPEED),
            krylov_iterations: solved.iterations,
        })
    }
}

fn ligand(diffusivity: f64) -> LigandParameters {
    LigandParameters {
        diffusivity,
        decay_rate: 0.0,
        inlet_concentration: FAR_CONCENTRATION,
        uptake: SurfaceUptake::Absorbing,
    }
}

/// Quick: the molecule balance at Pe = 1000 on a coarse grid (a/h = 4, box ±4a). Full: Sh at Pe = 100, 300,
/// 1000 on a/h = 8 (box ±6a) against the box-corrected two-term result, within 2, 5 and 12 % (the
/// layer is resolved at Pe = 100 only; the study in `bench/RECORDS.md`).
pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let mut checks = Vec::new();
    match tier {
        Tier::Quick => {
            let s = SphereInStream::solve(4.0, 4.0)?.sherwood(1000.0)?;
            checks.push(Check::new(
                "absorbing sphere, Stokes flow, Pe = 1000 (a/h = 4, box ±4a)",
                "relative mass-balance error",
                s.mass_balance,
                0.0,
                1e-8,
                "Gauss divergence theorem, REFERENCES.md F",
            ));
        }
        Tier::Full => {
            let stream = SphereInStream::solve(8.0, 6.0)?;
            for (pe, tolerance) in [(100.0, 0.02), (300.0, 0.05), (1000.0, 0.12)] {
                let s = stream.sherwood(pe)?;
                checks.push(Check::new(
                    &format!("absorbing sphere, Stokes flow, Pe = {pe} (a/h = 8, box ±6a)"),
                    "Sherwood number (diameter), box-corrected",
                    s.sherwood,
                    thin_boundary_layer::sherwood_two_term(pe, s.drag_ratio)?,
                    tolerance,
                    SOURCE,
                ));
            }
        }
    }
    Ok(checks)
}
