//! The cheap estimates of a whole chamber, from plain numbers (no solve): Péclet numbers, the isolated-cell
//! low-Péclet anisotropy, the mean-field background along the chamber, what a typical cell senses in it, and
//! the number density at which crowding raises its direction error through `readable_error`. The formulas are
//! those of [`super::estimates`]; this module chooses which background a chamber has and scans the density.

use std::f64::consts::PI;

use super::estimates::{
    biot_number, estimate_cell_sensing, homogenised_source_and_sink, isolated_anisotropy, CellEstimateInputs,
    ColumnInlet, IsolatedFlow, MeanFieldColumn, SensingEstimate,
};
use crate::boundaries::ChamberFace;

/// What the chamber estimates need to know of a case (SI units).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ChamberInputs {
    /// Chamber edge lengths (m); x is the flow direction.
    pub size: [f64; 3],
    /// The kind of each chamber face, `[axis][low, high]`.
    pub faces: [[ChamberFace; 2]; 3],
    /// Ligand concentration of the inflow (molecules/m³).
    pub inlet_concentration: f64,
    /// Number of cells and their total volume (m³).
    pub cell_count: usize,
    pub cell_volume: f64,
    /// The typical cell (the case's defaults) in the undisturbed stream.
    pub typical_cell: CellEstimateInputs,
    /// The direction error above which a cell cannot read the flow direction (`[sensing] readable_error`).
    pub readable_error: f64,
}

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

/// Where crowding makes a typical cell fail: the number density at which its direction error rises through
/// `readable_error` as cells are added.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CriticalDensity {
    /// Number density (cells/m³) at the crossing, if the scanned range holds one.
    pub density: Option<f64>,
    /// Why there is none.
    pub none_because: Option<NoCrowdingFailure>,
    /// The direction error the density is taken at (`readable_error`).
    pub level: f64,
    /// Scanned range (cells/m³): from a tenth of one cell per chamber to a volume fraction of 0.5.
    pub range: [f64; 2],
    /// Direction error at the low end of the range (a nearly isolated cell) and at the case's density.
    pub isolated_error: f64,
    pub case_error: f64,
}

/// Why no density makes a cell fail by crowding.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum NoCrowdingFailure {
    /// The error is above the level at every density of the range, a nearly isolated cell's included.
    FailsAtEveryDensity,
    /// The error falls through the level as cells are added (their background gradient is the cue there) and
    /// never rises back through it.
    GradientHelps,
    /// The error stays below the level at every density of the range.
    ReadableAtEveryDensity,
}

impl NoCrowdingFailure {
    pub fn reason(self) -> &'static str {
        match self {
            NoCrowdingFailure::FailsAtEveryDensity => {
                "the error is above readable_error at every density, a nearly isolated cell's included"
            }
            NoCrowdingFailure::GradientHelps => {
                "the error falls below readable_error as cells are added (their background gradient is the cue) \
                 and never rises back"
            }
            NoCrowdingFailure::ReadableAtEveryDensity => "the error stays below readable_error at every density",
        }
    }
}

/// Every estimate of one chamber.
#[derive(Clone, Debug)]
pub struct ChamberEstimates {
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
    /// The critical density at each point of `profile` (the outlet one is `critical_density`).
    pub critical_density_by_position: Vec<(f64, Option<CriticalDensity>)>,
    /// The criteria of [`super::estimates::mean_field_regime_breaches`] the chamber breaks (empty: it holds).
    pub regime_breaches: Vec<String>,
    /// Width of the outlet layer, `OUTLET_LAYERS · D/U` (m); `None` without a through-flow column.
    pub outlet_layer: Option<f64>,
    /// The typical cell, for per-cell estimates with each cell's own radius and secretion.
    pub typical_cell: CellEstimateInputs,
    inputs: ChamberInputs,
}

/// Number of points of the printed profile along x.
const PROFILE_POINTS: usize = 11;

impl ChamberEstimates {
    pub fn new(inputs: &ChamberInputs) -> Self {
        let cell = inputs.typical_cell;
        let (a, d, u) = (cell.radius, cell.diffusivity, cell.speed);
        let length = inputs.size[0];
        let biot = biot_number(cell.uptake, a, d);
        let decay_number = a * (cell.decay_rate / d).sqrt();
        let peclet_cell = u * a / d;
        let chamber_volume: f64 = inputs.size.iter().product();
        let number_density = inputs.cell_count as f64 / chamber_volume;
        let mut estimates = ChamberEstimates {
            flow: cell.flow,
            radius: a,
            peclet_cell,
            peclet_chamber: u * length / d,
            biot,
            decay_number,
            own_surface_concentration: biot
                .map(|bi| cell.secretion_rate / (4.0 * PI * d * a * (1.0 + decay_number + bi))),
            isolated_anisotropy: biot.map(|bi| isolated_anisotropy(cell.flow, peclet_cell, bi, decay_number)),
            number_density,
            volume_fraction: inputs.cell_volume / chamber_volume,
            background: Background::Unavailable(String::new()),
            profile: Vec::new(),
            critical_density: None,
            critical_density_by_position: Vec::new(),
            regime_breaches: Vec::new(),
            outlet_layer: None,
            typical_cell: cell,
            inputs: *inputs,
        };
        estimates.background = estimates.background_at_density(number_density);
        estimates.profile = (0..PROFILE_POINTS)
            .filter_map(|i| {
                let x = length * i as f64 / (PROFILE_POINTS - 1) as f64;
                let (c, g) = estimates.background.at(x)?;
                Some(ProfilePoint { x, sensing: estimate_cell_sensing(&cell, c, g)? })
            })
            .collect();
        estimates.critical_density = estimates.find_critical_density(length);
        estimates.critical_density_by_position =
            estimates.profile.iter().map(|p| (p.x, estimates.find_critical_density(p.x))).collect();
        let column = matches!(estimates.background, Background::Column(_));
        estimates.regime_breaches = super::estimates::mean_field_regime_breaches(
            estimates.volume_fraction,
            biot,
            peclet_cell,
            column.then_some(estimates.peclet_chamber),
        );
        estimates.outlet_layer = column.then(|| super::estimates::OUTLET_LAYERS * d / u);
        estimates
    }

    fn chamber_volume(&self) -> f64 {
        self.inputs.size.iter().product()
    }

    /// The mean-field background if the layout had `density` cells per m³ of the typical cell.
    fn background_at_density(&self, density: f64) -> Background {
        let cell = &self.typical_cell;
        let (source, sink) = homogenised_source_and_sink(
            density,
            cell.secretion_rate,
            cell.radius,
            cell.diffusivity,
            cell.decay_rate,
            cell.uptake,
            1.0 - self.volume_fraction,
        );
        let faces = self.inputs.faces;
        let through_flow = faces[0] == [ChamberFace::Inlet, ChamberFace::Outlet] && cell.speed > 0.0;
        if through_flow {
            return Background::Column(MeanFieldColumn {
                length: self.inputs.size[0],
                speed: cell.speed,
                // Molecular diffusivity as the longitudinal dispersion: an assumption (no Taylor dispersion).
                dispersion: cell.diffusivity,
                sink_rate: sink,
                source_density: source,
                inlet_concentration: self.inputs.inlet_concentration,
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

    /// The estimate for a cell of radius `radius` (m) secreting `secretion_rate` (molecules/s) with its centre
    /// at `x` (m from x_min), in the chamber's background.
    pub fn cell(&self, radius: f64, secretion_rate: f64, x: f64) -> Option<SensingEstimate> {
        let (c, g) = self.background.at(x)?;
        let inputs = CellEstimateInputs { radius, secretion_rate, ..self.typical_cell };
        estimate_cell_sensing(&inputs, c, g)
    }

    /// Direction error of the typical cell at `x` for a layout of `density` cells per m³.
    pub fn direction_error_at(&self, density: f64, x: f64) -> Option<f64> {
        let background = self.background_at_density(density);
        let (c, g) = background.at(x)?;
        Some(estimate_cell_sensing(&self.typical_cell, c, g)?.direction_error)
    }

    /// Scans the number density on a log grid for the first crossing where the error of a cell at `x` rises
    /// through `readable_error` (a crossing where it falls is the background gradient helping, not a failure)
    /// and refines it by bisection in log density.
    fn find_critical_density(&self, x: f64) -> Option<CriticalDensity> {
        let lo = 0.1 / self.chamber_volume();
        let hi = 0.5 / (4.0 / 3.0 * PI * self.radius.powi(3));
        if hi <= lo {
            return None;
        }
        let level = self.inputs.readable_error;
        let range = [lo, hi];
        let samples = 200;
        let at = |i: usize| lo * (hi / lo).powf(i as f64 / samples as f64);
        let isolated_error = self.direction_error_at(lo, x)?;
        let case_error = self.direction_error_at(self.number_density, x)?;
        let result = |density: Option<f64>, none_because: Option<NoCrowdingFailure>| CriticalDensity {
            density,
            none_because,
            level,
            range,
            isolated_error,
            case_error,
        };
        let mut previous = isolated_error;
        let mut fell = false;
        for i in 1..=samples {
            let rho = at(i);
            let err = self.direction_error_at(rho, x)?;
            if previous <= level && err > level {
                let (mut a, mut b) = (at(i - 1).ln(), rho.ln());
                for _ in 0..60 {
                    let mid = 0.5 * (a + b);
                    if self.direction_error_at(mid.exp(), x)? > level {
                        b = mid;
                    } else {
                        a = mid;
                    }
                }
                return Some(result(Some((0.5 * (a + b)).exp()), None));
            }
            fell |= previous > level && err <= level;
            previous = err;
        }
        let why = if fell {
            NoCrowdingFailure::GradientHelps
        } else if isolated_error > level {
            NoCrowdingFailure::FailsAtEveryDensity
        } else {
            NoCrowdingFailure::ReadableAtEveryDensity
        };
        Some(result(None, Some(why)))
    }

    /// The estimated anisotropy along the flow of the typical cell at `points` positions from inlet to outlet:
    /// `(x, anisotropy)`, where the background is known.
    pub fn dense_profile(&self, points: usize) -> (Vec<f64>, Vec<f64>) {
        let length = match &self.background {
            Background::Column(c) => c.length,
            _ => self.profile.last().map_or(0.0, |p| p.x),
        };
        (0..points)
            .filter_map(|i| {
                let x = length * i as f64 / (points.max(2) - 1) as f64;
                let (c, g) = self.background.at(x)?;
                Some((x, estimate_cell_sensing(&self.typical_cell, c, g)?.anisotropy_along_flow))
            })
            .unzip()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::problem::SurfaceUptake;

    fn chamber(faces: [[ChamberFace; 2]; 3], speed: f64) -> ChamberInputs {
        let radius = 5e-6;
        ChamberInputs {
            size: [400e-6, 100e-6, 100e-6],
            faces,
            inlet_concentration: 0.0,
            cell_count: 20,
            cell_volume: 20.0 * 4.0 / 3.0 * PI * radius * radius * radius,
            typical_cell: CellEstimateInputs {
                radius,
                secretion_rate: 1.0,
                diffusivity: 1e-10,
                decay_rate: 0.0,
                uptake: SurfaceUptake::FirstOrder { rate_constant: 2e-6 },
                speed,
                flow: IsolatedFlow::Darcy,
                integration_time: 60.0,
            },
            readable_error: 1.0,
        }
    }

    #[test]
    fn the_faces_choose_the_background() {
        use ChamberFace::{FarField, Inlet, Outlet, Periodic, Wall};
        let through = ChamberEstimates::new(&chamber([[Inlet, Outlet], [Wall; 2], [Wall; 2]], 1e-6));
        assert!(matches!(through.background, Background::Column(_)));
        assert_eq!(through.profile.len(), PROFILE_POINTS);
        // Closed with uptake: the uniform balance S/k_eff of the homogenised cells.
        let closed = ChamberEstimates::new(&chamber([[Periodic; 2], [Wall; 2], [Wall; 2]], 0.0));
        let c = &closed.typical_cell;
        let fluid = 1.0 - closed.volume_fraction;
        let (s, k) = homogenised_source_and_sink(
            closed.number_density,
            c.secretion_rate,
            c.radius,
            c.diffusivity,
            c.decay_rate,
            c.uptake,
            fluid,
        );
        assert_eq!(closed.background, Background::Uniform(s / k));
        let open = ChamberEstimates::new(&chamber([[FarField; 2], [FarField; 2], [FarField; 2]], 1e-6));
        assert_eq!(open.background, Background::Isolated);
        assert_eq!(open.background.at(1e-4), Some((0.0, 0.0)));
    }

    #[test]
    fn chamber_numbers_follow_from_the_inputs() {
        let inputs = chamber(
            [[ChamberFace::Inlet, ChamberFace::Outlet], [ChamberFace::Wall; 2], [ChamberFace::Wall; 2]],
            1e-6,
        );
        let e = ChamberEstimates::new(&inputs);
        let volume = 400e-6 * 100e-6 * 100e-6;
        assert!((e.number_density - 20.0 / volume).abs() <= 1e-12 * e.number_density);
        assert!((e.peclet_cell - 1e-6 * 5e-6 / 1e-10).abs() < 1e-12);
        assert!((e.peclet_chamber - 1e-6 * 400e-6 / 1e-10).abs() < 1e-9);
        // Bi = κa/D = 0.1, no decay: c_s = ν/(4πDa(1 + Bi)).
        let own = 1.0 / (4.0 * PI * 1e-10 * 5e-6 * 1.1);
        assert!((e.own_surface_concentration.unwrap() - own).abs() <= 1e-12 * own);
        // A cell at the chamber's inlet face sees the inlet concentration (zero) and the estimate of the typical
        // cell there; the per-cell estimate with the typical radius and secretion is the profile's first point.
        assert_eq!(e.cell(5e-6, 1.0, 0.0), Some(e.profile[0].sensing));
        let (x, a) = e.dense_profile(5);
        assert_eq!(x.len(), 5);
        assert_eq!(a[0], e.profile[0].sensing.anisotropy_along_flow);
    }
}
