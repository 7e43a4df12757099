//! The physical problem as the solver receives it: validated SI parameters, no units, no file names.
//!
//! Sign conventions are stated where each type is defined.

pub use crate::boundaries::{ChamberBoundaries, ChamberFace, FarFieldSources};

/// First-order binding of ligand at a cell surface. Sign: the bound flux density (molecules m^-2 s^-1) is
/// `rate_constant · c_surface` and leaves the fluid.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum SurfaceUptake {
    /// Reflecting surface: nothing is bound (the surface concentration is the sensed quantity).
    None,
    /// Uptake flux `κ c` with κ = `rate_constant` (m/s).
    FirstOrder { rate_constant: f64 },
    /// Perfect absorber: c = 0 on the surface, every arriving molecule is bound.
    Absorbing,
}

/// Ligand properties (SI).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LigandParameters {
    /// Effective diffusivity in the medium (m^2/s), > 0.
    pub diffusivity: f64,
    /// First-order bulk decay rate k (1/s), ≥ 0.
    pub decay_rate: f64,
    /// Concentration carried in by the inlet flow (molecules/m^3), ≥ 0.
    pub inlet_concentration: f64,
    pub uptake: SurfaceUptake,
}

/// The flow model of the porous medium.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum MediumModel {
    /// `u = −(K/μ)∇p`, `∇·u = 0`; cells are impermeable (no normal flux), with slip along their surface.
    Darcy { viscosity: f64, permeability: f64 },
    /// `−μ_e∇²u + (μ/K)u + ∇p = 0`, `∇·u = 0`, no slip on cells.
    Brinkman { viscosity: f64, permeability: f64, effective_viscosity: f64 },
    /// `−μ∇²u + ∇p = 0`, `∇·u = 0`, no slip on cells.
    Stokes { viscosity: f64 },
}

impl MediumModel {
    /// The model's name in case files and reports: "darcy", "brinkman" or "stokes".
    pub fn name(&self) -> &'static str {
        match self {
            MediumModel::Darcy { .. } => "darcy",
            MediumModel::Brinkman { .. } => "brinkman",
            MediumModel::Stokes { .. } => "stokes",
        }
    }
}

/// Flow parameters: the medium and the mean superficial velocity along +x (m/s, ≥ 0; zero means no flow).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FlowParameters {
    pub medium: MediumModel,
    pub mean_velocity: f64,
}
