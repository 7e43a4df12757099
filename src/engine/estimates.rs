//! The cheap estimates applied to one case ([`CaseEstimates`], no solve): Péclet numbers, the isolated-cell
//! low-Péclet anisotropy for the case's flow model, the mean-field background along the chamber, the
//! anisotropy and direction error that follow from it, the density at which the direction error reaches 1 and
//! the run forecast; and, beside a solve, the estimate columns of `cells.csv`, the self/neighbour split and the
//! per-cell aggregates of `summary.json`. The formulas live in `solver::post::estimates`; `plumefield
//! estimate` prints this (`crate::commands::estimate`), `run` writes it beside the measured values.

use std::collections::BTreeMap;

use numkit::quantile_sorted;
use serde_json::json;
use solver::flow::brinkman::resolution::check_resolution;
use solver::flow::brinkman::{BrinkmanMedium, ScreeningLengthWarning};
use solver::linalg::{KrylovParams, MultigridParams};
use solver::post::decompose::{decompose, DecomposeInputs, SplitMode};
use solver::post::estimates::{
    biot_number, estimate_cell_sensing, homogenised_source_and_sink, isolated_anisotropy, CellEstimateInputs,
    ColumnInlet, IsolatedFlow, MeanFieldColumn, SensingEstimate,
};
use solver::post::{CellSensing, SensingModel};
use solver::problem::{ChamberFace, SurfaceUptake};
use solver::solve_case::SteadySolution;
use solver::transport::boundary_layer::{check_boundary_layer, BoundaryLayerWarning};

use crate::case::Case;
use crate::io::table::{CellTable, Column, ColumnValues};
use crate::outputs::columns::{split_columns, SPLIT_COLUMNS};
use crate::outputs::summary::{ColumnQuantiles, SplitCost, SplitSummary};

/// The mean-field background of the chamber, or why there is none.
#[derive(Clone, Debug, PartialEq)]
pub enum Background {
    /// Inlet at x_min, outlet at x_max: the 1-D column along x.
    Column(MeanFieldColumn),
    /// No through-flow, closed or periodic chamber with a sink: the uniform balance `S/k_eff`.
    Uniform(f64),
    /// An open chamber (far-field faces): every cell is estimated as isolated (no background).
    Isolated,
    /// Not estimated (the reason, for the report).
    Unavailable(String),
}

impl Background {
    /// `(c_bg, dc_bg/dx)` at downstream position `x` (m from the chamber's x_min face).
    pub fn at(&self, x: f64) -> Option<(f64, f64)> {
        match self {
            Background::Column(column) => {
                let x = x.clamp(0.0, column.length);
                Some((column.concentration(x), column.gradient(x)))
            }
            Background::Uniform(c) => Some((*c, 0.0)),
            Background::Isolated => Some((0.0, 0.0)),
            Background::Unavailable(_) => None,
        }
    }
}

/// A point of the estimated profile along the chamber.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ProfilePoint {
    /// Downstream position (m).
    pub x: f64,
    pub sensing: SensingEstimate,
}

/// Where the direction error of a typical cell at the outlet crosses 1 as the number density changes.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CriticalDensity {
    /// Number density (cells/m³) at the crossing, if the scanned range holds one.
    pub density: Option<f64>,
    /// True when the error rises through 1 with density (crowding hides the signal), false when it falls.
    pub rising: bool,
    /// Scanned range (cells/m³): from a tenth of one cell per chamber to a volume fraction of 0.5.
    pub range: [f64; 2],
    /// Direction error at the low end of the range (a nearly isolated cell) and at the case's density.
    pub isolated_error: f64,
    pub case_error: f64,
}

/// Forecast for `run` at the case's grid, on `threads` threads (the shared model of `crate::forecast`).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Forecast {
    pub grid_cells: usize,
    pub threads: usize,
    pub memory_bytes: f64,
    pub seconds: f64,
    /// Extra seconds of the self/neighbour decomposition as configured.
    pub decompose_seconds: f64,
}

/// Every estimate of one case.
#[derive(Clone, Debug)]
pub struct CaseEstimates {
    pub flow: IsolatedFlow,
    pub radius: f64,
    pub peclet_cell: f64,
    pub peclet_chamber: f64,
    /// κa/D; `None` for a perfect absorber.
    pub biot: Option<f64>,
    pub decay_number: f64,
    /// Own surface concentration of an isolated cell at rest, `ν/(4πDa(1 + β + Bi))` (molecules/m³).
    pub own_surface_concentration: Option<f64>,
    pub isolated_anisotropy: Option<f64>,
    pub number_density: f64,
    pub volume_fraction: f64,
    pub background: Background,
    pub profile: Vec<ProfilePoint>,
    pub critical_density: Option<CriticalDensity>,
    pub forecast: Forecast,
    /// The typical cell (case defaults), for per-cell estimates with each cell's own radius and secretion.
    pub typical_cell: CellEstimateInputs,
    /// Brinkman resolution guard at the case's grid (the same one `run` reports): set when √(μ_e K/μ) spans
    /// fewer than two spacings, with the expected drag error and the spacing that resolves it.
    pub flow_resolution: Option<ScreeningLengthWarning>,
    /// Boundary-layer guard at the case's grid (as `run` reports it), from the stream's cell Péclet number.
    pub boundary_layer: Option<BoundaryLayerWarning>,
    fluid_fraction: f64,
    chamber_volume: f64,
}

/// Number of points of the printed profile along x.
const PROFILE_POINTS: usize = 11;

impl CaseEstimates {
    /// Applies the estimates to a validated case (no solve).
    pub fn for_case(case: &Case) -> Self {
        let a = case.cell_radius;
        let d = case.ligand.diffusivity;
        let u = case.flow.mean_velocity;
        let length = case.chamber_size[0];
        let flow = IsolatedFlow::of_medium(&case.flow.medium, a);
        let biot = biot_number(case.ligand.uptake, a, d);
        let decay_number = a * (case.ligand.decay_rate / d).sqrt();
        let peclet_cell = u * a / d;
        let chamber_volume: f64 = case.chamber_size.iter().product();
        let cells = &case.layout.cells;
        let cell_volume: f64 =
            cells.iter().map(|c| 4.0 / 3.0 * std::f64::consts::PI * c.radius.powi(3)).sum();
        let volume_fraction = cell_volume / chamber_volume;
        let number_density = cells.len() as f64 / chamber_volume;
        let typical_cell = CellEstimateInputs {
            radius: a,
            secretion_rate: case.secretion_rate,
            diffusivity: d,
            decay_rate: case.ligand.decay_rate,
            uptake: case.ligand.uptake,
            speed: u,
            flow,
            integration_time: case.sensing.integration_time,
        };
        let fluid_fraction = 1.0 - volume_fraction;
        let mut estimates = CaseEstimates {
            flow,
            radius: a,
            peclet_cell,
            peclet_chamber: u * length / d,
            biot,
            decay_number,
            own_surface_concentration: biot.map(|bi| {
                case.secretion_rate / (4.0 * std::f64::consts::PI * d * a * (1.0 + decay_number + bi))
            }),
            isolated_anisotropy: biot.map(|bi| isolated_anisotropy(flow, peclet_cell, bi, decay_number)),
            number_density,
            volume_fraction,
            background: Background::Unavailable(String::new()),
            profile: Vec::new(),
            critical_density: None,
            forecast: forecast(case),
            typical_cell,
            flow_resolution: BrinkmanMedium::from_model(case.flow.medium)
                .and_then(|medium| check_resolution(&medium, case.grid.spacing)),
            boundary_layer: boundary_layer_warning(case),
            fluid_fraction,
            chamber_volume,
        };
        estimates.background = estimates.background_at_density(case, number_density);
        estimates.profile = (0..PROFILE_POINTS)
            .filter_map(|i| {
                let x = length * i as f64 / (PROFILE_POINTS - 1) as f64;
                let (c, g) = estimates.background.at(x)?;
                Some(ProfilePoint { x, sensing: estimate_cell_sensing(&typical_cell, c, g)? })
            })
            .collect();
        estimates.critical_density = estimates.find_critical_density(case);
        estimates
    }

    /// The mean-field background if the layout had `density` cells per m³ of the case's typical cell.
    fn background_at_density(&self, case: &Case, density: f64) -> Background {
        let cell = &self.typical_cell;
        let (source, sink) = homogenised_source_and_sink(
            density,
            cell.secretion_rate,
            cell.radius,
            cell.diffusivity,
            cell.decay_rate,
            cell.uptake,
            self.fluid_fraction,
        );
        let faces = case.boundaries.faces;
        let through_flow = faces[0] == [ChamberFace::Inlet, ChamberFace::Outlet] && cell.speed > 0.0;
        if through_flow {
            return Background::Column(MeanFieldColumn {
                length: case.chamber_size[0],
                speed: cell.speed,
                // Molecular diffusivity as the longitudinal dispersion: an assumption (no Taylor dispersion).
                dispersion: cell.diffusivity,
                sink_rate: sink,
                source_density: source,
                inlet_concentration: case.ligand.inlet_concentration,
                inlet: ColumnInlet::Dirichlet,
            });
        }
        let closed = faces
            .iter()
            .flatten()
            .all(|f| matches!(f, ChamberFace::Wall | ChamberFace::Symmetry | ChamberFace::Periodic));
        if closed && sink > 0.0 {
            return Background::Uniform(source / sink);
        }
        if faces.iter().flatten().any(|f| *f == ChamberFace::FarField) {
            return Background::Isolated;
        }
        Background::Unavailable(if closed {
            "a closed chamber without uptake or decay has no steady background".into()
        } else {
            "the mean field needs an inlet at x_min and an outlet at x_max (or a closed chamber with a sink)"
                .into()
        })
    }

    /// The estimate for one cell of the layout (its own radius and secretion, the case's background at its x).
    pub fn cell(&self, cell: &mesh::Cell) -> Option<SensingEstimate> {
        let (c, g) = self.background.at(cell.centre[0])?;
        let inputs = CellEstimateInputs {
            radius: cell.radius,
            secretion_rate: cell.secretion_rate,
            ..self.typical_cell
        };
        estimate_cell_sensing(&inputs, c, g)
    }

    /// Direction error of the typical cell at the outlet end for a layout of `density` cells per m³.
    fn outlet_direction_error(&self, case: &Case, density: f64) -> Option<f64> {
        let background = self.background_at_density(case, density);
        let (c, g) = background.at(case.chamber_size[0])?;
        Some(estimate_cell_sensing(&self.typical_cell, c, g)?.direction_error)
    }

    /// Scans the number density on a log grid for the first crossing of direction error 1 and refines it by
    /// bisection in log density.
    fn find_critical_density(&self, case: &Case) -> Option<CriticalDensity> {
        let lo = 0.1 / self.chamber_volume;
        let hi = 0.5 / (4.0 / 3.0 * std::f64::consts::PI * self.radius.powi(3));
        if hi <= lo {
            return None;
        }
        let range = [lo, hi];
        let samples = 200;
        let at = |i: usize| lo * (hi / lo).powf(i as f64 / samples as f64);
        let isolated_error = self.outlet_direction_error(case, lo)?;
        let case_error = self.outlet_direction_error(case, self.number_density)?;
        let mut previous = isolated_error;
        for i in 1..=samples {
            let rho = at(i);
            let err = self.outlet_direction_error(case, rho)?;
            if (previous - 1.0).signum() != (err - 1.0).signum() {
                let rising = err > previous;
                let (mut a, mut b) = (at(i - 1).ln(), rho.ln());
                for _ in 0..60 {
                    let mid = 0.5 * (a + b);
                    let e = self.outlet_direction_error(case, mid.exp())?;
                    if (e > 1.0) == rising {
                        b = mid;
                    } else {
                        a = mid;
                    }
                }
                let density = Some((0.5 * (a + b)).exp());
                return Some(CriticalDensity { density, rising, range, isolated_error, case_error });
            }
            previous = err;
        }
        Some(CriticalDensity { density: None, rising: false, range, isolated_error, case_error })
    }

    /// The estimated anisotropy of the typical cell at `points` positions from inlet to outlet (for figures).
    pub fn dense_profile(&self, points: usize) -> serde_json::Value {
        let length = match &self.background {
            Background::Column(c) => c.length,
            _ => self.profile.last().map_or(0.0, |p| p.x),
        };
        let (xs, values): (Vec<f64>, Vec<f64>) = (0..points)
            .filter_map(|i| {
                let x = length * i as f64 / (points.max(2) - 1) as f64;
                let (c, g) = self.background.at(x)?;
                Some((x, estimate_cell_sensing(&self.typical_cell, c, g)?.anisotropy_along_flow))
            })
            .unzip();
        json!({ "x": xs, "anisotropy_along_flow": values })
    }

    /// Machine-readable form (SI units; `null` where an estimate does not apply).
    pub fn to_json(&self) -> serde_json::Value {
        let (background_kind, background_note) = match &self.background {
            Background::Column(c) => (
                "column",
                format!(
                    "1-D advection-diffusion along x, Dirichlet inlet, D_L = D, outlet {:.6e}",
                    c.outlet_concentration()
                ),
            ),
            Background::Uniform(c) => ("uniform", format!("S/k_eff = {c:.6e}")),
            Background::Isolated => ("isolated", "open chamber: each cell estimated as isolated".to_string()),
            Background::Unavailable(why) => ("none", why.clone()),
        };
        json!({
            "flow_model": self.flow.name(),
            "brinkman_alpha": match self.flow { IsolatedFlow::Brinkman { alpha } => Some(alpha), _ => None },
            "flow_resolution": self.flow_resolution.as_ref().map(|w| json!({
                "screening_length": w.screening_length, "spacing": w.spacing,
                "expected_drag_error": w.expected_drag_error, "suggested_spacing": w.suggested_spacing,
                "message": w.to_string(),
            })),
            "boundary_layer": self.boundary_layer.as_ref().map(|w| json!({
                "surface_peclet": w.surface_peclet, "expected_error": w.expected_error,
                "suggested_spacing": w.suggested_spacing, "message": w.to_string(),
            })),
            "radius": self.radius,
            "peclet_cell": self.peclet_cell,
            "peclet_chamber": self.peclet_chamber,
            "biot": self.biot,
            "decay_number": self.decay_number,
            "own_surface_concentration": self.own_surface_concentration,
            "isolated_anisotropy": self.isolated_anisotropy,
            "number_density": self.number_density,
            "volume_fraction": self.volume_fraction,
            "background": { "kind": background_kind, "note": background_note,
                "outlet_concentration": self.background.at(f64::INFINITY).map(|b| b.0) },
            "profile": {
                "x": self.profile.iter().map(|p| p.x).collect::<Vec<_>>(),
                "background": self.profile.iter().map(|p| p.sensing.background).collect::<Vec<_>>(),
                "mean_surface_concentration": self.profile.iter().map(|p| p.sensing.mean_surface_concentration).collect::<Vec<_>>(),
                "anisotropy_along_flow": self.profile.iter().map(|p| p.sensing.anisotropy_along_flow).collect::<Vec<_>>(),
                "direction_error": self.profile.iter().map(|p| finite_or_string(p.sensing.direction_error)).collect::<Vec<_>>(),
            },
            "profile_dense": self.dense_profile(101),
            "integration_time": self.typical_cell.integration_time,
            "critical_density": self.critical_density.map(|c| json!({
                "density": c.density, "rising": c.rising, "range": c.range, "position": "outlet",
                "isolated_direction_error": finite_or_string(c.isolated_error),
                "case_direction_error": finite_or_string(c.case_error),
            })),
            "forecast": {
                "grid_cells": self.forecast.grid_cells,
                "memory_bytes": self.forecast.memory_bytes,
                "seconds": self.forecast.seconds,
                "decompose_seconds": self.forecast.decompose_seconds,
            },
            "units": {
                "radius": "m", "own_surface_concentration": "molecules/m^3", "number_density": "1/m^3",
                "background.outlet_concentration": "molecules/m^3", "profile.x": "m",
                "profile.background": "molecules/m^3", "profile.mean_surface_concentration": "molecules/m^3",
                "critical_density.density": "1/m^3", "forecast.memory_bytes": "B", "forecast.seconds": "s",
                "flow_resolution.screening_length": "m", "flow_resolution.spacing": "m",
                "flow_resolution.suggested_spacing": "m",
            },
        })
    }
}

/// JSON has no infinity: keep it as the string "inf".
fn finite_or_string(x: f64) -> serde_json::Value {
    if x.is_finite() {
        json!(x)
    } else {
        json!(if x > 0.0 { "inf" } else { "-inf" })
    }
}

/// The shared run forecast (`crate::forecast`) on this machine's cores, as `run` uses them.
fn forecast(case: &Case) -> Forecast {
    let model = crate::forecast::Forecast::of(case);
    let threads = std::thread::available_parallelism().map_or(1, |n| n.get());
    Forecast {
        grid_cells: model.grid_cells,
        threads,
        memory_bytes: model.memory_bytes_on(threads),
        seconds: model.seconds(threads) - model.decompose_seconds(threads),
        decompose_seconds: model.decompose_seconds(threads),
    }
}

/// Whether the first-order estimates apply to the uptake model.
pub fn estimates_apply(uptake: SurfaceUptake) -> bool {
    !matches!(uptake, SurfaceUptake::Absorbing)
}

/// The boundary-layer guard before a solve: the stream's cell Péclet number `U h / D` stands for the one at
/// the cell surfaces (the solve reports the measured one).
pub fn boundary_layer_warning(case: &Case) -> Option<BoundaryLayerWarning> {
    let h = case.grid.spacing;
    check_boundary_layer(case.flow.mean_velocity * h / case.ligand.diffusivity, h)
}

/// Names of the estimate columns that `run` appends after the contract columns of `cells.csv`.
pub const ESTIMATE_COLUMNS: [&str; 7] = [
    "estimate_background",
    "estimate_mean_surface_concentration",
    "estimate_anisotropy_along_flow",
    "estimate_direction_error",
    "mean_surface_concentration_over_estimate",
    "anisotropy_along_flow_over_estimate",
    "direction_error_over_estimate",
];

/// The estimate for every cell beside its measured sensing: the estimate columns and the measured/estimate
/// ratios (NaN where no estimate applies, e.g. absorbing cells or a chamber without a mean field).
pub fn estimate_columns(case: &Case, sensing: &[CellSensing]) -> Vec<Column> {
    let estimates = CaseEstimates::for_case(case);
    let per_cell: Vec<Option<SensingEstimate>> =
        case.layout.cells.iter().map(|c| estimates.cell(c)).collect();
    let pick = |f: &dyn Fn(&SensingEstimate) -> f64| -> Vec<f64> {
        per_cell.iter().map(|e| e.as_ref().map_or(f64::NAN, f)).collect()
    };
    let ratio =
        |measured: &dyn Fn(&CellSensing) -> f64, estimate: &dyn Fn(&SensingEstimate) -> f64| -> Vec<f64> {
            sensing
                .iter()
                .zip(&per_cell)
                .map(|(s, e)| e.as_ref().map_or(f64::NAN, |e| measured(s) / estimate(e)))
                .collect()
        };
    let names = ESTIMATE_COLUMNS;
    vec![
        Column::real(names[0], "molecules/m^3", "mean-field background at the cell's x (1-D advection-diffusion with the homogenised cells)", pick(&|e| e.background)),
        Column::real(names[1], "molecules/m^3", "estimated mean surface concentration: own isolated-cell value plus the background seen through the surface", pick(&|e| e.mean_surface_concentration)),
        Column::real(names[2], "1", "estimated anisotropy along the flow: own low-Peclet cloud, background uptake and background gradient", pick(&|e| e.anisotropy_along_flow)),
        Column::real(names[3], "1", "estimated direction error over sensing.integration_time", pick(&|e| e.direction_error)),
        Column::real(names[4], "1", "measured / estimated mean surface concentration", ratio(&|s| s.mean_surface_concentration, &|e| e.mean_surface_concentration)),
        Column::real(names[5], "1", "measured / estimated anisotropy along the flow", ratio(&|s| s.anisotropy_along_flow, &|e| e.anisotropy_along_flow)),
        Column::real(names[6], "1", "measured / estimated direction error", ratio(&|s| s.direction_error, &|e| e.direction_error)),
    ]
}

/// The self/neighbour split of a run: its `cells.csv` columns, its summary and its cost (when it ran).
pub struct SelfNeighbourSplit {
    pub columns: Vec<Column>,
    pub summary: SplitSummary,
    pub cost: Option<SplitCost>,
    /// One line per failed split (its cells keep NaN); the main result stands.
    pub warnings: Vec<String>,
}

/// Solves the own field of each cell chosen by `[sensing] decompose` (one extra right-hand side each, on the
/// operator of the total solve) and turns the split into columns.
pub fn split_self_and_neighbours(case: &Case, solved: &SteadySolution) -> anyhow::Result<SelfNeighbourSplit> {
    let cells = case.layout.cells.len();
    // Listed ids were checked against the layout when the case was validated.
    let chosen = case.sensing.decompose.choose(cells);
    let mut splits = Vec::new();
    let mut summary = SplitSummary {
        selection: format!("{:?}", case.sensing.decompose),
        cells: chosen.len(),
        iterations: None,
    };
    let mut cost = None;
    let mut warnings = Vec::new();
    if !chosen.is_empty() {
        let inputs = DecomposeInputs {
            geometry: &solved.geometry,
            layout: &case.layout,
            assembly: &solved.transport.assembly,
            total: &solved.transport.concentration,
            sensing: &solved.sensing,
            model: SensingModel {
                uptake: case.ligand.uptake,
                diffusivity: case.ligand.diffusivity,
                integration_time: case.sensing.integration_time,
            },
            krylov: KrylovParams {
                relative_tolerance: case.solve.tolerance,
                max_iterations: case.solve.max_iterations,
            },
            multigrid: MultigridParams::default(),
        };
        match decompose(&inputs, &chosen, SplitMode::CellsOnly) {
            Ok(split) => {
                for e in &split.failed {
                    warnings.push(format!(
                        "the self/neighbour split of a cell failed ({e}); its columns are NaN"
                    ));
                }
                summary.iterations = Some(split.cells.iter().map(|s| s.iterations).collect());
                cost = Some(SplitCost {
                    setup_s: split.setup_seconds,
                    solve_s: split.solve_seconds,
                    seconds_per_right_hand_side: split.solve_seconds / split.right_hand_sides.max(1) as f64,
                    transport_s: solved.timing.transport,
                });
                splits = split.cells;
            }
            Err(e) => warnings.push(format!("the self/neighbour split failed ({e}); its columns are NaN")),
        }
    }
    let columns = split_columns(cells, &splits);
    Ok(SelfNeighbourSplit { columns, summary, cost, warnings })
}

/// Median, 10th and 90th percentile (linear interpolation between order statistics, common practice) of every
/// estimate, ratio and split column of `table`, over the finite values.
pub fn column_aggregates(table: &CellTable) -> BTreeMap<String, ColumnQuantiles> {
    let mut out = BTreeMap::new();
    for name in ESTIMATE_COLUMNS
        .iter()
        .chain(SPLIT_COLUMNS.iter().filter(|c| c.summarised).map(|c| &c.name))
        .chain(["anisotropy_along_flow", "direction_error"].iter())
    {
        let Some(column) = table.column(name) else { continue };
        let ColumnValues::Real(values) = &column.values else { continue };
        let mut finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
        finite.sort_by(f64::total_cmp);
        // No finite value: null in the JSON.
        let q = |p: f64| Some(quantile_sorted(&finite, p)).filter(|x| !x.is_nan());
        out.insert(
            name.to_string(),
            ColumnQuantiles { median: q(0.5), p10: q(0.1), p90: q(0.9), count: finite.len() },
        );
    }
    out
}
