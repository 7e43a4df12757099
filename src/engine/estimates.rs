//! The cheap estimates applied to one case ([`CaseEstimates`], no solve): the chamber's estimates
//! (`solver::post::chamber_estimates`, from plain numbers taken from the case), the run forecast and the
//! resolution guards; and, beside a solve, the estimate columns of `cells.csv`, the self/neighbour split and
//! the per-cell aggregates of `summary.json`. `plumefield estimate` prints this (`crate::commands::estimate`),
//! `run` writes it beside the measured values.

use std::collections::BTreeMap;

use numkit::quantile_sorted;
use solver::flow::brinkman::resolution::check_resolution;
use solver::flow::brinkman::{BrinkmanMedium, ScreeningLengthWarning};
use solver::linalg::KrylovParams;
use solver::post::chamber_estimates::{Background, ChamberEstimates, ChamberInputs, CriticalDensity};
use solver::post::decompose::{decompose, DecomposeInputs, SplitMode};
use solver::post::estimates::{CellEstimateInputs, IsolatedFlow, SensingEstimate};
use solver::post::{CellSensing, SensingModel};
use solver::problem::SurfaceUptake;
use solver::solve_case::SteadySolution;
use solver::transport::boundary_layer::{check_boundary_layer, BoundaryLayerWarning};

use crate::case::Case;
use crate::io::table::{CellTable, Column, ColumnValues};
use crate::outputs::columns::{split_columns, SPLIT_COLUMNS};
use crate::outputs::summary::{
    BackgroundSummary, BoundaryLayerSummary, CaseEstimatesSummary, ColumnQuantiles, CriticalDensityAt,
    CriticalDensitySummary, DenseProfileSummary, FlowResolutionSummary, ForecastSummary,
    MeanFieldRegimeSummary, ProfileSummary, SplitCost, SplitSummary, Unbounded,
};

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

/// Every estimate of one case: the chamber's (the library's formulas, reached through `Deref`), the run
/// forecast and the resolution guards at the case's grid.
#[derive(Clone, Debug)]
pub struct CaseEstimates {
    pub chamber: ChamberEstimates,
    pub forecast: Forecast,
    /// Brinkman resolution guard at the case's grid (the same one `run` reports): set when √(μ_e K/μ) spans
    /// fewer than two spacings, with the expected drag error and the spacing that resolves it.
    pub flow_resolution: Option<ScreeningLengthWarning>,
    /// Boundary-layer guard at the case's grid (as `run` reports it), from the stream's cell Péclet number.
    pub boundary_layer: Option<BoundaryLayerWarning>,
}

impl std::ops::Deref for CaseEstimates {
    type Target = ChamberEstimates;
    fn deref(&self) -> &ChamberEstimates {
        &self.chamber
    }
}

/// Points of the estimated anisotropy profile kept in the summary for the figures.
const DENSE_PROFILE_POINTS: usize = 101;

impl CaseEstimates {
    /// Applies the estimates to a validated case (no solve).
    pub fn for_case(case: &Case) -> Self {
        let a = case.cell_radius;
        let cells = &case.layout.cells;
        let inputs = ChamberInputs {
            size: case.chamber_size,
            faces: case.boundaries.faces,
            inlet_concentration: case.ligand.inlet_concentration,
            cell_count: cells.len(),
            cell_volume: cells.iter().map(|c| 4.0 / 3.0 * std::f64::consts::PI * c.radius.powi(3)).sum(),
            typical_cell: CellEstimateInputs {
                radius: a,
                secretion_rate: case.secretion_rate,
                diffusivity: case.ligand.diffusivity,
                decay_rate: case.ligand.decay_rate,
                uptake: case.ligand.uptake,
                speed: case.flow.mean_velocity,
                flow: IsolatedFlow::of_medium(&case.flow.medium, a),
                integration_time: case.sensing.integration_time,
            },
            readable_error: case.sensing.readable_error,
        };
        CaseEstimates {
            chamber: ChamberEstimates::new(&inputs),
            forecast: forecast(case),
            flow_resolution: BrinkmanMedium::from_model(case.flow.medium)
                .and_then(|medium| check_resolution(&medium, case.grid.spacing)),
            boundary_layer: boundary_layer_warning(case),
        }
    }

    /// The estimate for one cell of the layout (its own radius and secretion, the case's background at its x).
    pub fn cell(&self, cell: &mesh::Cell) -> Option<SensingEstimate> {
        self.chamber.cell(cell.radius, cell.secretion_rate, cell.centre[0])
    }

    /// `estimates.case` of `summary.json`, and `plumefield estimate --json`.
    pub fn summary(&self) -> CaseEstimatesSummary {
        let (kind, note) = match &self.background {
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
        let along =
            |f: &dyn Fn(&SensingEstimate) -> f64| self.profile.iter().map(|p| f(&p.sensing)).collect();
        let (dense_x, dense_anisotropy) = self.dense_profile(DENSE_PROFILE_POINTS);
        let units = [
            ("radius", "m"),
            ("own_surface_concentration", "molecules/m^3"),
            ("number_density", "1/m^3"),
            ("background.outlet_concentration", "molecules/m^3"),
            ("profile.x", "m"),
            ("profile.background", "molecules/m^3"),
            ("profile.mean_surface_concentration", "molecules/m^3"),
            ("critical_density.density", "1/m^3"),
            ("critical_density_by_position.x", "m"),
            ("critical_density_by_position.critical_density.density", "1/m^3"),
            ("mean_field_regime.outlet_layer", "m"),
            ("forecast.memory_bytes", "B"),
            ("forecast.seconds", "s"),
            ("flow_resolution.screening_length", "m"),
            ("flow_resolution.spacing", "m"),
            ("flow_resolution.suggested_spacing", "m"),
        ];
        CaseEstimatesSummary {
            flow_model: self.flow.name().to_string(),
            brinkman_alpha: match self.flow {
                IsolatedFlow::Brinkman { alpha } => Some(alpha),
                _ => None,
            },
            flow_resolution: self.flow_resolution.as_ref().map(|w| FlowResolutionSummary {
                screening_length: w.screening_length,
                spacing: w.spacing,
                expected_drag_error: w.expected_drag_error,
                suggested_spacing: w.suggested_spacing,
                message: w.to_string(),
            }),
            boundary_layer: self.boundary_layer.as_ref().map(|w| BoundaryLayerSummary {
                surface_peclet: w.surface_peclet,
                expected_error: w.expected_error,
                suggested_spacing: w.suggested_spacing,
                message: w.to_string(),
            }),
            radius: self.radius,
            peclet_cell: self.peclet_cell,
            peclet_chamber: self.peclet_chamber,
            biot: self.biot,
            decay_number: self.decay_number,
            own_surface_concentration: self.own_surface_concentration,
            isolated_anisotropy: self.isolated_anisotropy,
            number_density: self.number_density,
            volume_fraction: self.volume_fraction,
            background: BackgroundSummary {
                kind: kind.to_string(),
                note,
                outlet_concentration: self.background.at(f64::INFINITY).map(|b| b.0),
            },
            profile: ProfileSummary {
                x: self.profile.iter().map(|p| p.x).collect(),
                background: along(&|e| e.background),
                mean_surface_concentration: along(&|e| e.mean_surface_concentration),
                anisotropy_along_flow: along(&|e| e.anisotropy_along_flow),
                direction_error: self.profile.iter().map(|p| Unbounded(p.sensing.direction_error)).collect(),
            },
            profile_dense: DenseProfileSummary { x: dense_x, anisotropy_along_flow: dense_anisotropy },
            integration_time: self.typical_cell.integration_time,
            critical_density: self.critical_density.map(|c| critical_density_summary(c, "outlet")),
            critical_density_by_position: self
                .critical_density_by_position
                .iter()
                .map(|(x, c)| CriticalDensityAt {
                    x: *x,
                    critical_density: c.map(|c| critical_density_summary(c, "at x")),
                })
                .collect(),
            mean_field_regime: Some(MeanFieldRegimeSummary {
                holds: self.regime_breaches.is_empty(),
                breaches: self.regime_breaches.clone(),
                outlet_layer: self.outlet_layer,
            }),
            forecast: ForecastSummary {
                grid_cells: self.forecast.grid_cells,
                memory_bytes: self.forecast.memory_bytes,
                seconds: self.forecast.seconds,
                decompose_seconds: self.forecast.decompose_seconds,
            },
            units: units.iter().map(|(k, u)| (k.to_string(), u.to_string())).collect(),
        }
    }
}

/// A critical density as written in `estimates.case`; `position` says where its direction error is taken.
fn critical_density_summary(c: CriticalDensity, position: &str) -> CriticalDensitySummary {
    CriticalDensitySummary {
        density: c.density,
        readable_error: c.level,
        none_because: c.none_because.map(|n| n.reason().to_string()),
        range: c.range,
        position: position.to_string(),
        isolated_direction_error: Unbounded(c.isolated_error),
        case_direction_error: Unbounded(c.case_error),
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
/// operator and hierarchy that the total solve kept), at most `parallel_solves` at once, and turns the split into
/// columns.
pub fn split_self_and_neighbours(
    case: &Case,
    solved: &SteadySolution,
    parallel_solves: usize,
) -> anyhow::Result<SelfNeighbourSplit> {
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
    if let (false, Some(solver)) = (chosen.is_empty(), solved.transport.solver.as_ref()) {
        let inputs = DecomposeInputs {
            geometry: &solved.geometry,
            layout: &case.layout,
            assembly: &solved.transport.assembly,
            solver,
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
            parallel_solves,
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
    } else if !chosen.is_empty() {
        warnings.push("the self/neighbour split was skipped (the total solve's operator was freed); its columns are NaN".into());
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
