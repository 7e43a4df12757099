//! One steady case end to end: embedded geometry → flow → transport → per-cell sensing and mass balance.
//! Used by the `run` command and by the verification cases alike.

use crate::embedded::FacetStencils;
use crate::flow::brinkman::{
    solve_brinkman, BrinkmanError, BrinkmanMedium, BrinkmanParams, ScreeningLengthWarning,
};
use crate::flow::{solve_darcy, DarcyError, FlowField};
use crate::linalg::KrylovParams;
use crate::post::{cell_pressure_drop, cell_sensing, mass_balance, CellSensing, MassBalance, SensingModel};
use crate::problem::{ChamberBoundaries, FlowParameters, LigandParameters, MediumModel};
use crate::transport::{solve_steady, SteadyTransport, TransportError, TransportParams, TransportProblem};
use mesh::{EmbeddedGeometry, Grid, Layout};
use std::time::Instant;

/// The numerical stages, reported to the caller as they start.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Stage {
    Geometry,
    Flow,
    Transport,
    /// Transient runs: the time steps after the steady reference.
    TimeLoop,
    Sensing,
}

/// A steady case as the numerics see it (SI, validated).
#[derive(Clone)]
pub struct SteadyCase<'a> {
    pub grid: &'a Grid,
    pub layout: &'a Layout,
    pub boundaries: ChamberBoundaries,
    pub flow: FlowParameters,
    pub ligand: LigandParameters,
    /// Integration time of the counting-noise estimate (s).
    pub integration_time: f64,
    pub krylov: KrylovParams,
}

/// Everything computed for one case that the outputs need. What only the flow and transport assemblies read is
/// freed after them: the facet stencils, and the face apertures (`geometry.aperture` is empty).
pub struct SteadySolution {
    pub geometry: EmbeddedGeometry,
    pub flow: FlowField,
    /// `p_upstream − p_downstream` per cell along its local flow (Pa).
    pub cell_pressure_drop: Vec<f64>,
    /// Set when a Brinkman screening length is under-resolved by the grid.
    pub flow_resolution: Option<ScreeningLengthWarning>,
    pub transport: SteadyTransport,
    pub sensing: Vec<CellSensing>,
    pub balance: MassBalance,
    pub timing: SteadyTiming,
}

/// Wall-clock seconds of the stages of one steady case.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct SteadyTiming {
    pub geometry: f64,
    pub flow: f64,
    pub transport: f64,
    /// Part of `transport`: the far-field faces' coefficients.
    pub far_field: f64,
    pub sensing: f64,
}

#[derive(thiserror::Error, Debug)]
pub enum CaseSolveError {
    #[error(transparent)]
    Flow(#[from] DarcyError),
    #[error(transparent)]
    Brinkman(#[from] BrinkmanError),
    #[error(transparent)]
    Transport(#[from] TransportError),
    #[error("the {0} flow model is not implemented yet")]
    FlowModelNotImplemented(&'static str),
}

/// The flow of `case` driven at the superficial `mean_velocity` (m/s) by its medium model (Darcy, Brinkman or
/// Stokes), with the Brinkman resolution warning when the screening length is under-resolved.
pub fn solve_flow(
    geometry: &EmbeddedGeometry,
    stencils: &FacetStencils,
    case: &SteadyCase,
    mean_velocity: f64,
) -> Result<(FlowField, Option<ScreeningLengthWarning>), CaseSolveError> {
    match case.flow.medium {
        MediumModel::Darcy { viscosity, permeability } => {
            let flow = solve_darcy(
                geometry,
                stencils,
                case.layout.cells.len(),
                &case.boundaries,
                viscosity,
                permeability,
                mean_velocity,
                &case.krylov,
            )?;
            Ok((flow, None))
        }
        MediumModel::Brinkman { .. } | MediumModel::Stokes { .. } => {
            let medium = BrinkmanMedium::from_model(case.flow.medium)
                .ok_or(CaseSolveError::FlowModelNotImplemented("darcy"))?;
            let params = BrinkmanParams {
                krylov: KrylovParams {
                    max_iterations: case.krylov.max_iterations.max(400),
                    ..case.krylov.clone()
                },
                ..BrinkmanParams::default()
            };
            let solved =
                solve_brinkman(geometry, case.layout, &case.boundaries, &medium, mean_velocity, &params)?;
            Ok((solved.field, solved.resolution))
        }
    }
}

/// Solves one steady case; `on_stage` is told when each stage starts (for progress display).
pub fn solve_steady_case(
    case: &SteadyCase,
    on_stage: &mut dyn FnMut(Stage),
) -> Result<SteadySolution, CaseSolveError> {
    on_stage(Stage::Geometry);
    let t0 = Instant::now();
    let periodic = case.boundaries.periodic_axes();
    let mut geometry = EmbeddedGeometry::build(case.grid, case.layout, periodic);
    let stencils = FacetStencils::build(&geometry);
    let t_geometry = t0.elapsed().as_secs_f64();

    on_stage(Stage::Flow);
    let t1 = Instant::now();
    let (flow, flow_resolution) = solve_flow(&geometry, &stencils, case, case.flow.mean_velocity)?;
    let pressure_drops =
        cell_pressure_drop(&geometry, &stencils, case.layout, &flow.face_flux, &flow.pressure);
    let t_flow = t1.elapsed().as_secs_f64();

    on_stage(Stage::Transport);
    let t2 = Instant::now();
    let problem = TransportProblem {
        geometry: &geometry,
        stencils: &stencils,
        layout: case.layout,
        boundaries: case.boundaries,
        ligand: case.ligand,
        face_flux: &flow.face_flux,
        far_field_speed: case.flow.mean_velocity,
    };
    let params = TransportParams { krylov: case.krylov.clone(), ..TransportParams::default() };
    let transport = solve_steady(&problem, &params)?;
    drop(stencils);
    geometry.aperture = Default::default();
    let t_transport = t2.elapsed().as_secs_f64();
    let t_far_field = transport.assembly.far_field_seconds;

    on_stage(Stage::Sensing);
    let t3 = Instant::now();
    let model = SensingModel {
        uptake: case.ligand.uptake,
        diffusivity: case.ligand.diffusivity,
        integration_time: case.integration_time,
    };
    let sensing = cell_sensing(
        &geometry,
        case.layout,
        &transport.assembly.facets,
        &transport.concentration,
        &flow.face_flux,
        &model,
    );
    let balance = mass_balance(&transport.assembly, &geometry, &transport.concentration);
    let t_sensing = t3.elapsed().as_secs_f64();
    Ok(SteadySolution {
        geometry,
        flow,
        cell_pressure_drop: pressure_drops,
        flow_resolution,
        transport,
        sensing,
        balance,
        timing: SteadyTiming {
            geometry: t_geometry,
            flow: t_flow,
            transport: t_transport,
            far_field: t_far_field,
            sensing: t_sensing,
        },
    })
}
