//! Steady Brinkman (or Stokes) flow around the cells: assemble, solve, and hand the transport its face fluxes.

use super::assemble_momentum::{assemble_momentum, MomentumBlock, MomentumCoefficients};
use super::chamber_velocity::{ChamberVelocity, VelocityData};
use super::inlet_profile::fully_developed_profile;
use super::pressure_gradient::PressureCoupling;
use super::resolution::{check_resolution, ScreeningLengthWarning};
use super::saddle_system::SaddleSystem;
use super::sphere_index::SphereIndex;
use super::staggered_grid::ComponentGrid;
use super::surface_force::{surface_forces, SurfaceForces};
use super::{BrinkmanError, BrinkmanMedium};
use crate::flow::FlowField;
use crate::linalg::{
    bicgstab_until, gmres, refine_until, BicgstabParams, BicgstabWork, GmresParams, KrylovParams,
    MultigridParams, OuterResidual, RefinementParams, RefinementWork, RightHandSide, Shadow, SolveError,
    SolveInfo, SparseVector,
};
use crate::problem::{ChamberBoundaries, ChamberFace};
use mesh::{Axis, EmbeddedGeometry, Grid, Layout};
use rayon::prelude::*;
use std::f64::consts::PI;
use std::sync::Arc;

/// The Krylov method around the block preconditioner.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FlowKrylov {
    /// Mixed-precision iterative refinement: f64 residuals of the coupled system around right-preconditioned
    /// BiCGSTAB corrections in f32 (seven f32 vectors beside the f64 solution; two preconditioner applications
    /// per iteration). Default: on the bench chamber BiCGSTAB needs about as many applications as flexible
    /// GMRES(30), which keeps 2 × 30 vectors (bench/RECORDS.md).
    Bicgstab,
    /// Flexible GMRES restarted after `restart` (default setting 30) iterations.
    Gmres,
}

/// Solver parameters; `Default` suits production cases.
#[derive(Clone)]
pub struct BrinkmanParams {
    /// Relative residual of the coupled system and the iteration cap (default 1e-8, 400).
    pub krylov: KrylovParams,
    /// Relative residual asked of each f32 correction solve of [`FlowKrylov::Bicgstab`] (default 1e-4).
    pub inner_tolerance: f64,
    /// Default [`FlowKrylov::Bicgstab`].
    pub method: FlowKrylov,
    /// GMRES basis size per restart cycle (default 30; used by [`FlowKrylov::Gmres`] only).
    pub restart: usize,
    pub multigrid: MultigridParams,
    /// The finest level of each velocity multigrid applied from the compact momentum rows instead of a stored
    /// stencil (default true): ~100 bytes per grid cell less, for ~30 % more flow solve time.
    pub finest_from_rows: bool,
    /// Smallest cut fraction θ of a link to a sphere surface (default 0.05).
    pub min_wall_fraction: f64,
    /// Velocity on far-field faces; default the uniform stream `(U, 0, 0)`.
    pub far_field: Option<VelocityData>,
}

impl Default for BrinkmanParams {
    fn default() -> Self {
        BrinkmanParams {
            krylov: KrylovParams { relative_tolerance: 1e-8, max_iterations: 400 },
            inner_tolerance: RefinementParams::default().inner_tolerance,
            method: FlowKrylov::Bicgstab,
            restart: 30,
            multigrid: MultigridParams::default(),
            finest_from_rows: true,
            min_wall_fraction: 0.05,
            far_field: None,
        }
    }
}

/// A solved Brinkman/Stokes flow.
#[derive(Clone, Debug)]
pub struct BrinkmanSolution {
    /// Face fluxes, pressure, velocities, total drag per cell, iterations, divergence, pressure drop.
    pub field: FlowField,
    /// Viscous and pressure parts of the force on each cell (N).
    pub forces: SurfaceForces,
    /// Set when the screening length √K is under-resolved.
    pub resolution: Option<ScreeningLengthWarning>,
    /// Relative residual before the first and after every iteration (within a refinement round, the inner
    /// solve's estimate; the f64 residual at the end of each round).
    pub residual_history: Vec<f64>,
    /// Bytes held by the solver (operators, hierarchies, Krylov basis).
    pub memory_bytes: usize,
    pub stage_seconds: BrinkmanStageSeconds,
}

/// Wall-clock seconds of the stages of one Brinkman/Stokes solve.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct BrinkmanStageSeconds {
    /// Assembly with the preconditioner set-up.
    pub assembly: f64,
    /// Krylov iterations.
    pub iterations: f64,
    /// Face fluxes, drag and pressure from the solution.
    pub post: f64,
}

/// Solves `−μ_e∇²u + (μ/K)u + ∇p = 0, ∇·u = 0` with no slip on every cell, mean superficial velocity
/// `mean_velocity` (m/s) along +x.
#[allow(clippy::too_many_arguments)]
pub fn solve_brinkman(
    geometry: &EmbeddedGeometry,
    layout: &Layout,
    boundaries: &ChamberBoundaries,
    medium: &BrinkmanMedium,
    mean_velocity: f64,
    params: &BrinkmanParams,
) -> Result<BrinkmanSolution, BrinkmanError> {
    medium.validate()?;
    let grid = &geometry.grid;
    let cells = layout.cells.len();
    let resolution = check_resolution(medium, grid.spacing);
    if mean_velocity == 0.0 {
        return Ok(BrinkmanSolution {
            field: FlowField::at_rest(cells, grid),
            forces: SurfaceForces { viscous: vec![[0.0; 3]; cells], pressure: vec![[0.0; 3]; cells] },
            resolution,
            residual_history: vec![0.0],
            memory_bytes: 0,
            stage_seconds: BrinkmanStageSeconds::default(),
        });
    }
    let h = grid.spacing;
    let periodic = boundaries.periodic_axes();
    let driven = boundaries.faces[0][0] == ChamberFace::Periodic;
    let clock = std::time::Instant::now();
    let (system, rhs, spheres) =
        assemble_saddle(geometry, layout, boundaries, medium, mean_velocity, params, &mut Vec::new())?;
    let ranges = system.ranges();
    let t_assembly = clock.elapsed().as_secs_f64();
    let clock = std::time::Instant::now();
    let mut x = vec![0.0; system.len()];
    // The relative residual bounds continuity only on average: solve on with a tighter residual until every
    // grid cell keeps its volume to `tolerance × U/h` (the check of every run).
    let tolerance = params.krylov.relative_tolerance;
    let limit = |x: &[f64]| {
        let speed = if driven {
            through_flow_mean(&system.coupling.grid, &system.blocks[0].component, &x[ranges[0].clone()])
        } else {
            mean_velocity.abs()
        };
        tolerance * speed / h
    };
    let (result, krylov_bytes) = match params.method {
        FlowKrylov::Bicgstab => {
            let mut work = system.work::<f32>();
            let mut refinement = RefinementWork::default();
            let result = refine_until(
                &|v: &[f32], y: &mut [f32]| system.apply(v, y),
                |r: &[f32], z: &mut [f32]| system.precondition(r, z, &mut work),
                |x: &[f64], scale: f64, out: &mut [f32]| {
                    let (norm, peak) = system.scaled_residual(x, &rhs, scale, out);
                    OuterResidual { norm, unmet: peak / limit(x) }
                },
                RightHandSide::<f64>::Sparse(&rhs).norm(),
                &mut x,
                &RefinementParams {
                    krylov: params.krylov.clone(),
                    inner_tolerance: params.inner_tolerance,
                    ..RefinementParams::default()
                },
                &mut refinement,
            );
            let bytes = refinement.memory_bytes();
            drop(refinement);
            match result {
                // The f32 corrections stalled short of the target (a nearly singular system, e.g. Stokes flow
                // in a periodic box): go on from the solution reached with BiCGSTAB in f64.
                Err(SolveError::NoConvergence { iterations, residual_history, .. })
                    if iterations < params.krylov.max_iterations =>
                {
                    let mut f64_work = system.work::<f64>();
                    let round = KrylovParams {
                        max_iterations: params.krylov.max_iterations - iterations,
                        ..params.krylov.clone()
                    };
                    let result = bicgstab_until(
                        &|v: &[f64], y: &mut [f64]| system.apply(v, y),
                        |r: &[f64], z: &mut [f64]| system.precondition(r, z, &mut f64_work),
                        RightHandSide::Sparse(&rhs),
                        &mut x,
                        &BicgstabParams { krylov: round, shadow: Shadow::Unstored },
                        &mut BicgstabWork::default(),
                        |x, r| system.residual_continuity_peak(r) / limit(x),
                    );
                    let joined = |more: usize, mut history: Vec<f64>| {
                        let mut all = residual_history.clone();
                        all.extend(history.drain(..).skip(1));
                        (iterations + more, all)
                    };
                    let result = match result {
                        Ok(info) => {
                            let (iterations, residual_history) =
                                joined(info.iterations, info.residual_history);
                            Ok(SolveInfo {
                                iterations,
                                relative_residual: info.relative_residual,
                                residual_history,
                            })
                        }
                        Err(SolveError::NoConvergence {
                            iterations: more,
                            relative_residual,
                            residual_history: history,
                        }) => {
                            let (iterations, residual_history) = joined(more, history);
                            Err(SolveError::NoConvergence { iterations, relative_residual, residual_history })
                        }
                        Err(e) => Err(e),
                    };
                    (result, bytes.max(8 * 5 * system.len()))
                }
                result => (result, bytes),
            }
        }
        FlowKrylov::Gmres => {
            (gmres_until(&system, &rhs, &mut x, params, limit), 8 * system.len() * (2 * params.restart + 4))
        }
    };
    let info = match result {
        Ok(info) => info,
        // Stopped short of the tighter target with the user's tolerance met: keep the solution (the
        // divergence check of the run then says where continuity is looser).
        Err(SolveError::NoConvergence { iterations, relative_residual, residual_history })
            if relative_residual <= tolerance =>
        {
            SolveInfo { iterations, relative_residual, residual_history }
        }
        Err(e) => return Err(BrinkmanError::from_solve(e)),
    };
    if x.iter().any(|v| !v.is_finite()) {
        return Err(BrinkmanError::NonFinite { iteration: info.iterations });
    }
    let memory_bytes = system.memory_bytes() + 8 * system.len() + krylov_bytes;
    let t_solve = clock.elapsed().as_secs_f64();
    let clock = std::time::Instant::now();

    // The velocity components are read in place from x, and the preconditioner (rows, hierarchies) is
    // released before the outputs are built.
    let SaddleSystem { mut blocks, coupling, scale, .. } = system;
    let (velocity_part, pressure_part) = x.split_at_mut(ranges[3].start);
    let mut pressure: Vec<f64> = pressure_part
        .iter()
        .zip(&coupling.pressure_active)
        .map(|(&p, &a)| if a { scale * p } else { 0.0 })
        .collect();
    let (u0, rest) = velocity_part.split_at_mut(ranges[1].start);
    let (u1, u2) = rest.split_at_mut(ranges[2].start - ranges[1].start);
    let mut u: [&mut [f64]; 3] = [u0, u1, u2];
    drop(rhs);
    let has_outlet = boundaries.faces.iter().flatten().any(|&f| f == ChamberFace::Outlet);
    if !has_outlet {
        // The pressure level is free: report it with zero mean over the pressure unknowns.
        let active = &coupling.pressure_active;
        let count = active.iter().filter(|&&a| a).count().max(1) as f64;
        let mean = pressure.iter().zip(active).filter(|(_, &a)| a).map(|(p, _)| p).sum::<f64>() / count;
        pressure.iter_mut().zip(active).filter(|(_, &a)| a).for_each(|(p, _)| *p -= mean);
    }
    let mut forces = surface_forces(&blocks, &coupling, &spheres, [&*u[0], &*u[1], &*u[2]], &pressure, cells);

    // A periodic chamber was driven by a unit mean pressure gradient: scale to the requested mean velocity and add
    // the linear pressure part −G (x − x_c) (whose force on a cell is G V_cell along x).
    let mut driving_gradient = 0.0;
    if driven {
        let mean = through_flow_mean(&coupling.grid, &blocks[0].component, u[0]);
        if mean <= 0.0 || !mean.is_finite() {
            return Err(BrinkmanError::Blocked);
        }
        let k = mean_velocity / mean;
        driving_gradient = k;
        u.iter_mut().for_each(|c| c.iter_mut().for_each(|v| *v *= k));
        blocks.iter_mut().for_each(|b| b.known.iter_mut().for_each(|(_, v)| *v *= k));
        let centre = grid.origin[0] + 0.5 * grid.extent()[0];
        for (n, p) in pressure.iter_mut().enumerate() {
            if coupling.pressure_active[n] {
                let x = grid.cell_centre(n % grid.shape[0], 0, 0)[0];
                *p = k * *p - k * (x - centre);
            }
        }
        for (owner, cell) in layout.cells.iter().enumerate() {
            for part in [&mut forces.viscous[owner], &mut forces.pressure[owner]] {
                part.iter_mut().for_each(|f| *f *= k);
            }
            forces.pressure[owner][0] += k * 4.0 / 3.0 * PI * cell.radius.powi(3);
        }
    }

    // Face fluxes h² u on every face (unknowns and prescribed values); periodic face n repeats face 0.
    let face_flux: [Vec<f64>; 3] = Axis::ALL.map(|axis| {
        let c = axis.index();
        let comp = &blocks[c].component;
        let mut q = vec![0.0; grid.face_count(axis)];
        for (n, &value) in u[c].iter().enumerate() {
            if coupling.velocity_active[c][n] {
                q[comp.face(grid, comp.ijk(n))] = h * h * value;
            }
        }
        for &(n, value) in &blocks[c].known {
            q[comp.face(grid, comp.ijk(n))] = h * h * value;
        }
        if periodic[c] {
            let s = grid.face_shape(axis);
            for k in 0..s[2] {
                for j in 0..s[1] {
                    for i in 0..s[0] {
                        let ijk = [i, j, k];
                        if ijk[c] == grid.shape[c] {
                            let mut wrap = ijk;
                            wrap[c] = 0;
                            q[grid.face_index(axis, i, j, k)] =
                                q[grid.face_index(axis, wrap[0], wrap[1], wrap[2])];
                        }
                    }
                }
            }
        }
        q
    });
    drop(x);
    let fluid: Vec<bool> = geometry.volume_fraction.iter().map(|&phi| phi > 0.0).collect();
    let divergence = crate::flow::divergence_peak(grid, &face_flux, &fluid);
    let pressure_drop = if driven {
        driving_gradient * grid.extent()[0]
    } else {
        crate::flow::inlet_outlet_pressure_difference(grid, &pressure, &coupling.pressure_active)
    };
    let field = FlowField {
        face_flux,
        pressure,
        drag: forces.total(),
        iterations: info.iterations,
        relative_residual: info.relative_residual,
        max_divergence: divergence.value,
        max_divergence_cell: divergence.grid_cell,
        pressure_drop,
    };
    Ok(BrinkmanSolution {
        field,
        forces,
        resolution,
        residual_history: info.residual_history,
        memory_bytes,
        stage_seconds: BrinkmanStageSeconds {
            assembly: t_assembly,
            iterations: t_solve,
            post: clock.elapsed().as_secs_f64(),
        },
    })
}

/// The scaled saddle-point system (with its preconditioner hierarchies), its right-hand side, and the sphere
/// index of the cut links; `timings` receives the seconds of each assembly step (for timing studies).
pub(super) fn assemble_saddle(
    geometry: &EmbeddedGeometry,
    layout: &Layout,
    boundaries: &ChamberBoundaries,
    medium: &BrinkmanMedium,
    mean_velocity: f64,
    params: &BrinkmanParams,
    timings: &mut Vec<(&'static str, f64)>,
) -> Result<(SaddleSystem, SparseVector, SphereIndex), BrinkmanError> {
    let mut clock = std::time::Instant::now();
    let mut lap = |label: &'static str| {
        timings.push((label, clock.elapsed().as_secs_f64()));
        clock = std::time::Instant::now();
    };
    let grid = &geometry.grid;
    let periodic = boundaries.periodic_axes();
    let spheres = SphereIndex::new(grid, layout, periodic);
    lap("sphere index");
    let driven = boundaries.faces[0][0] == ChamberFace::Periodic;
    let mu_e = medium.effective_viscosity;
    let sigma = medium.resistivity();

    let mut inlet: [[Option<Vec<f64>>; 2]; 3] = Default::default();
    for (a, sides) in inlet.iter_mut().enumerate() {
        for (side, slot) in sides.iter_mut().enumerate() {
            if boundaries.faces[a][side] == ChamberFace::Inlet {
                let profile =
                    fully_developed_profile(grid, boundaries, a, mu_e, sigma, mean_velocity, &params.krylov)
                        .map_err(BrinkmanError::from_solve)?;
                *slot = Some(profile);
            }
        }
    }
    let far_field: VelocityData =
        params.far_field.clone().unwrap_or_else(|| Arc::new(move |_| [mean_velocity, 0.0, 0.0]));
    let chamber = ChamberVelocity::new(grid, *boundaries, inlet, far_field);
    lap("inlet profile");
    let coefficients = MomentumCoefficients {
        effective_viscosity: mu_e,
        resistivity: sigma,
        driving_gradient: if driven { 1.0 } else { 0.0 },
        min_wall_fraction: params.min_wall_fraction,
    };
    // The three components are independent; their sequential passes run side by side.
    let assembled: Vec<MomentumBlock> = (0..3)
        .into_par_iter()
        .map(|c| assemble_momentum(grid, c, &chamber, &spheres, &coefficients))
        .collect();
    let mut blocks: [MomentumBlock; 3] =
        assembled.try_into().map_err(|_| BrinkmanError::Internal("three blocks"))?;
    lap("momentum blocks");
    let components = [0, 1, 2].map(|c| blocks[c].component.clone());
    let velocity_active = [0, 1, 2].map(|c| blocks[c].operator.active.clone());
    let coupling = PressureCoupling::new(grid, components, velocity_active);
    if !coupling.pressure_active.iter().any(|&a| a) {
        return Err(BrinkmanError::Blocked);
    }
    close_dead_end_faces(&coupling, &mut blocks);
    lap("coupling");
    // The right-hand side kept sparse: the momentum rows' values (nonzero next to driven faces only) leave the
    // blocks before the hierarchies are built.
    let mut entries = Vec::new();
    let mut start = 0;
    for block in blocks.iter_mut() {
        let values = std::mem::take(&mut block.rhs);
        entries.extend(values.iter().enumerate().filter(|(_, &v)| v != 0.0).map(|(i, &v)| (start + i, v)));
        start += values.len();
    }
    let system = SaddleSystem::new(blocks, coupling, mu_e, sigma, &params.multigrid, params.finest_from_rows)
        .ok_or(BrinkmanError::Internal("momentum conductances outside the compact encoding"))?;
    lap("hierarchies");
    let known_inflow = system.coupling.known_inflow([
        system.blocks[0].known.as_slice(),
        system.blocks[1].known.as_slice(),
        system.blocks[2].known.as_slice(),
    ]);
    for (cell, &inflow) in known_inflow.iter().enumerate() {
        let value = -system.scale * inflow;
        if system.coupling.pressure_active[cell] && value != 0.0 {
            entries.push((start + cell, value));
        }
    }
    let len = system.len();
    Ok((system, SparseVector { len, entries }, spheres))
}

/// A prescribed face velocity whose grid cell has no velocity unknown on any other face (a sphere covers them
/// all, e.g. a cell a fraction of a spacing from the inlet) has no pressure unknown to balance it: its flux would
/// stay in that grid cell as a divergence of about U/h. Such a face is closed (value 0), as the faces whose
/// centres lie inside a sphere already are. No momentum row uses the value: the unknown across the grid cell
/// is not a row either, and its neighbours on the chamber face are prescribed too.
fn close_dead_end_faces(coupling: &PressureCoupling, blocks: &mut [MomentumBlock; 3]) {
    let open = |cell: Option<usize>| cell.is_some_and(|n| coupling.pressure_active[n]);
    for block in blocks.iter_mut() {
        let comp = &block.component;
        for (f, value) in block.known.iter_mut() {
            let (low, high) = comp.adjacent_cells(&coupling.grid, comp.ijk(*f));
            if !open(low) && !open(high) {
                *value = 0.0;
            }
        }
    }
}

/// Flexible GMRES on the f64 system, solving on from the solution reached with a tighter residual until the
/// continuity peak is within `limit(x)`.
fn gmres_until(
    system: &SaddleSystem,
    rhs: &SparseVector,
    x: &mut [f64],
    params: &BrinkmanParams,
    limit: impl Fn(&[f64]) -> f64,
) -> Result<SolveInfo, SolveError> {
    let mut work = system.work::<f64>();
    let operator = |v: &[f64], y: &mut [f64]| system.apply(v, y);
    let dense = rhs.to_dense();
    let mut krylov = params.krylov.clone();
    let mut iterations = 0;
    let mut residual_history = Vec::new();
    loop {
        let remaining = params.krylov.max_iterations.saturating_sub(iterations).max(1);
        let round = KrylovParams { max_iterations: remaining, ..krylov.clone() };
        let precondition = |r: &[f64], z: &mut [f64]| system.precondition(r, z, &mut work);
        let info = match gmres(
            &operator,
            precondition,
            &dense,
            x,
            &GmresParams { krylov: round, restart: params.restart },
        ) {
            Ok(info) => info,
            Err(SolveError::NoConvergence {
                iterations: more,
                relative_residual,
                residual_history: history,
            }) if relative_residual <= params.krylov.relative_tolerance => {
                SolveInfo { iterations: more, relative_residual, residual_history: history }
            }
            Err(SolveError::NoConvergence {
                iterations: more,
                relative_residual,
                residual_history: history,
            }) => {
                residual_history.extend(history.iter().skip(usize::from(!residual_history.is_empty())));
                return Err(SolveError::NoConvergence {
                    iterations: iterations + more,
                    relative_residual,
                    residual_history,
                });
            }
            Err(e) => return Err(e),
        };
        let round_converged = info.relative_residual <= krylov.relative_tolerance;
        iterations += info.iterations;
        residual_history.extend(info.residual_history.iter().skip(usize::from(!residual_history.is_empty())));
        let limit = limit(x);
        let peak = system.continuity_peak(x, rhs);
        if peak <= limit || !round_converged || iterations >= params.krylov.max_iterations {
            return Ok(SolveInfo { iterations, relative_residual: info.relative_residual, residual_history });
        }
        krylov.relative_tolerance = 0.5 * info.relative_residual * limit / peak;
    }
}

/// Mean x velocity `u` through the first layer of x faces of a periodic chamber (the unit of a driven solve).
fn through_flow_mean(grid: &Grid, comp: &ComponentGrid, u: &[f64]) -> f64 {
    let mut through = 0.0;
    for k in 0..grid.shape[2] {
        for j in 0..grid.shape[1] {
            through += u[comp.index([0, j, k])];
        }
    }
    through / (grid.shape[1] * grid.shape[2]) as f64
}
