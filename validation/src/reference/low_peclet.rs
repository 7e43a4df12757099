//! First-order (low-Péclet) surface anisotropy of an isolated secreting sphere in Darcy, Stokes or Brinkman
//! flow (shared/REFERENCES.md item E, sections E.2, E.3 and E.6).
//!
//! Source: [derived] in REFERENCES.md by a regular inner expansion matched to the point source in a stream
//! (item C), verified there by a radial ODE solve and an independent axisymmetric PDE solve. Dimensionless:
//! ρ = r/a, `C = c·4πDa/ν`, `Pe = Ua/D` (radius-based), `Bi = κa/D`, `s = 1/(1 + Bi)`, `β = a√(k/D)`;
//! flow `v_r = g(ρ) cosθ` with θ from the downstream pole. Results used here:
//!
//! - `C = s/ρ + Pe [h(ρ) cosθ + m(ρ)] + o(Pe)`, `h'' + 2h'/ρ − 2h/ρ² = −s g/ρ²`, `h'(1) = Bi h(1)`,
//!   `h → s/2`; `m = −s/2 + Bi s²/(2ρ)`; h by variation of parameters (E.2).
//! - `J = ∫₁^∞ g ρ⁻² dρ`: Darcy 3/4, Stokes 3/8, Brinkman
//!   `J(α) = 1 − (1 + 3/α + 3/α²)/4 + (3/α²) e^{α} [E₅(α) + α E₄(α)]` (E.2).
//! - `h(1) = s J/(2 + Bi)`, `⟨C⟩_S = s − Pe s²/2`, `A = ⟨c cosθ⟩_S/⟨c⟩_S = Pe J/(3(2 + Bi))`,
//!   front–back `[c(0) − c(π)]/⟨c⟩_S = 6A` (E.3).
//! - With decay (E.6): `A = Pe J_β / (3[2 + 2β + β² + Bi(1 + β)])`,
//!   `J_β = ∫₁^∞ g (1 + βt)² e^{−2β(t−1)} t⁻² dt`; Darcy `J_β = 3/4`, Stokes
//!   `J_β = 3/8 − 3β/4 + (3/2)β² e^{2β} E₁(2β)`; Brinkman by quadrature. Leading order ⟨C⟩ = 1/(1 + β + Bi).
//!
//! Validity: first order in Pe; REFERENCES.md E.3/E.4 advise Pe ≲ 0.05 and a few per cent tolerance (Stokes
//! has an O(Pe² ln Pe) correction). Round-off: the closed-form J(α) loses about `log₁₀(3/α²)` digits as α → 0.

use super::brinkman_sphere::BrinkmanSphere;
use super::quadrature::{integrate, integrate_to_infinity};
use super::special::scaled_expint;
use super::{require_non_negative, require_positive, ReferenceError};

/// Relative tolerance of the quadratures in this file.
const TOLERANCE: f64 = 1e-12;

/// The flow past the sphere (item B): it sets the radial profile `g(ρ) = v_r/cosθ`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Flow {
    /// Darcy potential flow, `g = 1 − ρ⁻³`.
    Darcy,
    /// Stokes flow, `g = 1 − 3/(2ρ) + 1/(2ρ³)`.
    Stokes,
    /// Brinkman flow with `alpha` = a√(μ/(μ_e K)) (dimensionless, > 0).
    Brinkman { alpha: f64 },
}

impl Flow {
    fn validated(self) -> Result<Self, ReferenceError> {
        if let Flow::Brinkman { alpha } = self {
            require_positive("alpha", alpha)?;
        }
        Ok(self)
    }

    /// Radial profile `g(ρ) = v_r/(U cosθ)` at ρ = r/a ≥ 1 (dimensionless).
    pub fn radial_velocity_profile(self, rho: f64) -> f64 {
        match self {
            Flow::Darcy => 1.0 - rho.powi(-3),
            Flow::Stokes => 1.0 - 1.5 / rho + 0.5 * rho.powi(-3),
            Flow::Brinkman { alpha } => {
                BrinkmanSphere { radius: 1.0, speed: 1.0, effective_viscosity: 1.0, screening: alpha }
                    .radial_profiles(rho)
                    .0
            }
        }
    }
}

/// First-order coefficient `J = ∫₁^∞ g(ρ) ρ⁻² dρ` (dimensionless): Darcy 3/4, Stokes 3/8, Brinkman closed
/// form with `E_n` (REFERENCES.md E.2).
pub fn first_order_integral(flow: Flow) -> Result<f64, ReferenceError> {
    Ok(match flow.validated()? {
        Flow::Darcy => 0.75,
        Flow::Stokes => 0.375,
        Flow::Brinkman { alpha } => {
            let a2 = alpha * alpha;
            // e^{α}E_n(α) is evaluated scaled, so large α neither overflows nor underflows.
            1.0 - (1.0 + 3.0 / alpha + 3.0 / a2) / 4.0
                + 3.0 / a2 * (scaled_expint(5, alpha) + alpha * scaled_expint(4, alpha))
        }
    })
}

/// First-order coefficient with bulk decay, `J_β = ∫₁^∞ g(t)(1 + βt)² e^{−2β(t−1)} t⁻² dt`
/// (dimensionless; `decay_number` β = a√(k/D) ≥ 0): Darcy 3/4, Stokes closed form, Brinkman by quadrature.
pub fn first_order_integral_with_decay(flow: Flow, decay_number: f64) -> Result<f64, ReferenceError> {
    let beta = require_non_negative("decay_number", decay_number)?;
    match flow.validated()? {
        Flow::Darcy => Ok(0.75),
        Flow::Stokes => Ok(0.375 - 0.75 * beta
            + 1.5 * beta * beta * if beta > 0.0 { scaled_expint(1, 2.0 * beta) } else { 0.0 }),
        brinkman @ Flow::Brinkman { .. } => {
            if beta == 0.0 {
                return first_order_integral(brinkman);
            }
            decay_weighted_integral(brinkman, beta)
        }
    }
}

/// `J_β` by quadrature for any flow (also the independent check of the closed forms).
fn decay_weighted_integral(flow: Flow, beta: f64) -> Result<f64, ReferenceError> {
    integrate_to_infinity(
        |t| {
            let w = 1.0 + beta * t;
            flow.radial_velocity_profile(t) * w * w * (-2.0 * beta * (t - 1.0)).exp() / (t * t)
        },
        1.0,
        TOLERANCE,
    )
}

/// Escaping fraction `s = 1/(1 + Bi)` for `biot` Bi = κa/D ≥ 0.
fn escaping_fraction(biot: f64) -> f64 {
    1.0 / (1.0 + biot)
}

/// First-order anisotropy per Péclet number, `A/Pe = J/(3(2 + Bi))` (dimensionless; Pe = Ua/D), for surface
/// uptake `biot` Bi = κa/D ≥ 0 and no bulk decay (REFERENCES.md E.3).
pub fn anisotropy_per_peclet(flow: Flow, biot: f64) -> Result<f64, ReferenceError> {
    let biot = require_non_negative("biot", biot)?;
    Ok(first_order_integral(flow)? / (3.0 * (2.0 + biot)))
}

/// First-order anisotropy per Péclet number with bulk decay, `A/Pe = J_β/(3[2 + 2β + β² + Bi(1 + β)])`
/// (dimensionless; `biot` Bi ≥ 0, `decay_number` β ≥ 0; REFERENCES.md E.6).
pub fn anisotropy_per_peclet_with_decay(
    flow: Flow,
    biot: f64,
    decay_number: f64,
) -> Result<f64, ReferenceError> {
    let biot = require_non_negative("biot", biot)?;
    let beta = require_non_negative("decay_number", decay_number)?;
    let j = first_order_integral_with_decay(flow, beta)?;
    Ok(j / (3.0 * (2.0 + 2.0 * beta + beta * beta + biot * (1.0 + beta))))
}

/// Front–back contrast per Péclet number `[c(θ=0) − c(θ=π)]/(⟨c⟩_S Pe) = 2J/(2 + Bi) = 6 A/Pe` (dimensionless).
pub fn front_back_contrast_per_peclet(flow: Flow, biot: f64) -> Result<f64, ReferenceError> {
    Ok(6.0 * anisotropy_per_peclet(flow, biot)?)
}

/// Mean surface concentration to first order, `⟨C⟩_S = s − Pe s²/2` in units of ν/(4πDa) (dimensionless;
/// `peclet` Pe = Ua/D ≥ 0, `biot` Bi ≥ 0), the same for all three flows (REFERENCES.md E.3).
pub fn mean_surface_concentration(peclet: f64, biot: f64) -> Result<f64, ReferenceError> {
    require_non_negative("peclet", peclet)?;
    let s = escaping_fraction(require_non_negative("biot", biot)?);
    Ok(s - 0.5 * peclet * s * s)
}

/// Dipole profile `h(ρ)` of the first-order field `C₁ = h(ρ) cosθ + m(ρ)` (dimensionless) at ρ = r/a ≥ 1:
/// closed forms for Darcy and Stokes (REFERENCES.md E.2), variation of parameters by quadrature for Brinkman.
pub fn dipole_profile(flow: Flow, biot: f64, rho: f64) -> Result<f64, ReferenceError> {
    let biot = require_non_negative("biot", biot)?;
    let s = escaping_fraction(biot);
    Ok(match flow.validated()? {
        Flow::Darcy => s / 2.0 + s / (4.0 * rho.powi(3)) - 3.0 / (4.0 * (2.0 + biot) * rho * rho),
        Flow::Stokes => {
            s / 2.0 - 0.75 * s / rho - s / (8.0 * rho.powi(3))
                + 3.0 * s * (3.0 + biot) / (8.0 * (2.0 + biot) * rho * rho)
        }
        brinkman @ Flow::Brinkman { .. } => dipole_profile_by_quadrature(brinkman, biot, rho)?,
    })
}

/// `h(ρ) = −(ρ/3)∫_ρ^∞ S dt − (1/(3ρ²))∫_1^ρ t³ S dt + F₂/ρ²`, `S = −s g/t²`, `F₂ = I(Bi − 1)/(3(2 + Bi))`,
/// `I = ∫_1^∞ S dt` (REFERENCES.md E.2).
fn dipole_profile_by_quadrature(flow: Flow, biot: f64, rho: f64) -> Result<f64, ReferenceError> {
    let s = escaping_fraction(biot);
    let source = |t: f64| -s * flow.radial_velocity_profile(t) / (t * t);
    let outer = integrate_to_infinity(source, rho, TOLERANCE)?;
    let inner = if rho > 1.0 { integrate(|t| t * t * t * source(t), 1.0, rho, TOLERANCE)? } else { 0.0 };
    let total = -s * first_order_integral(flow)?;
    let f2 = total * (biot - 1.0) / (3.0 * (2.0 + biot));
    Ok(-(rho / 3.0) * outer - inner / (3.0 * rho * rho) + f2 / (rho * rho))
}

/// Surface dipole coefficient `h(1) = s J/(2 + Bi)` (dimensionless); `⟨C cosθ⟩_S = Pe h(1)/3`.
pub fn surface_dipole(flow: Flow, biot: f64) -> Result<f64, ReferenceError> {
    let biot = require_non_negative("biot", biot)?;
    Ok(escaping_fraction(biot) * first_order_integral(flow)? / (2.0 + biot))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::rel_diff;

    /// REFERENCES.md E.3, "Table of first-order coefficients" (J to 10 digits; A/Pe and h(1) to the digits
    /// printed).
    #[test]
    fn values_of_table_e3() {
        let darcy = Flow::Darcy;
        let stokes = Flow::Stokes;
        assert_eq!(first_order_integral(darcy).unwrap(), 0.75);
        assert_eq!(first_order_integral(stokes).unwrap(), 0.375);
        assert!((anisotropy_per_peclet(darcy, 0.0).unwrap() - 1.0 / 8.0).abs() < 1e-16);
        assert!((anisotropy_per_peclet(darcy, 1.0).unwrap() - 1.0 / 12.0).abs() < 1e-16);
        assert!((anisotropy_per_peclet(stokes, 0.0).unwrap() - 1.0 / 16.0).abs() < 1e-16);
        assert!((anisotropy_per_peclet(stokes, 1.0).unwrap() - 1.0 / 24.0).abs() < 1e-16);
        assert!((surface_dipole(darcy, 0.0).unwrap() - 0.375).abs() < 1e-16);
        assert!((surface_dipole(stokes, 0.0).unwrap() - 0.1875).abs() < 1e-16);
        // (α, J, A/Pe Bi=0, A/Pe Bi=1, h(1) Bi=0 or NaN when not tabulated)
        let table = [
            (1.0, 0.526_369_739_1, 0.087_728_289_9, 0.058_485_526_6, 0.263_184_869_6),
            (3.0, 0.615_467_376_6, 0.102_577_896_1, 0.068_385_264_1, 0.307_733_688_3),
            (10.0, 0.691_374_977_3, 0.115_229_162_9, 0.076_819_441_9, 0.345_687_488_6),
            (0.1, 0.404_945_090_5, 0.067_490_848_4, 0.044_993_898_9, f64::NAN),
            (100.0, 0.742_716_424_8, 0.123_786_070_8, 0.082_524_047_2, f64::NAN),
        ];
        for (alpha, j, a0, a1, h1) in table {
            let flow = Flow::Brinkman { alpha };
            assert!((first_order_integral(flow).unwrap() - j).abs() < 6e-11, "J({alpha})");
            assert!((anisotropy_per_peclet(flow, 0.0).unwrap() - a0).abs() < 6e-11, "A/Pe({alpha}, 0)");
            assert!((anisotropy_per_peclet(flow, 1.0).unwrap() - a1).abs() < 6e-11, "A/Pe({alpha}, 1)");
            if !h1.is_nan() {
                assert!((surface_dipole(flow, 0.0).unwrap() - h1).abs() < 6e-11, "h(1)({alpha})");
                // The variation-of-parameters profile at ρ = 1 must give the same h(1).
                let h_quad = dipole_profile(flow, 0.0, 1.0).unwrap();
                assert!((h_quad - h1).abs() < 1e-10, "h(1) by quadrature, α = {alpha}: {h_quad}");
            }
        }
    }

    /// The closed-form J(α) against direct quadrature of ∫ g ρ⁻² dρ, and the Stokes and Darcy limits of J(α)
    /// (J → 3/8 as α → 0; J ≈ 3/4 − 3/(4α) + 9/(4α²) as α → ∞).
    #[test]
    fn brinkman_integral_closed_form_quadrature_and_limits() {
        for alpha in [0.01, 0.1, 0.7, 3.0, 25.0, 300.0] {
            let flow = Flow::Brinkman { alpha };
            let closed = first_order_integral(flow).unwrap();
            let quadrature = decay_weighted_integral(flow, 0.0).unwrap();
            assert!(rel_diff(closed, quadrature) < 1e-10, "α = {alpha}: {closed} vs {quadrature}");
        }
        let small = first_order_integral(Flow::Brinkman { alpha: 1e-4 }).unwrap();
        assert!((small - 0.375).abs() < 1e-3, "{small}");
        let alpha: f64 = 1e3;
        let large = first_order_integral(Flow::Brinkman { alpha }).unwrap();
        let asymptote = 0.75 - 0.75 / alpha + 2.25 / (alpha * alpha);
        assert!((large - asymptote).abs() < 10.0 / alpha.powi(3), "{large} vs {asymptote}");
        assert!(first_order_integral(Flow::Brinkman { alpha: -1.0 }).is_err());
    }

    /// REFERENCES.md E.6: A/Pe with decay at (β, Bi) = (0.5, 0), (0.5, 1), (2, 0), (2, 1) (6 decimals), and
    /// the closed forms J_β (Darcy 3/4, Stokes with E₁) against quadrature.
    #[test]
    fn values_of_section_e6() {
        let cases = [(0.5, 0.0), (0.5, 1.0), (2.0, 0.0), (2.0, 1.0)];
        let expected = [
            (Flow::Darcy, [0.076_923, 0.052_632, 0.025_000, 0.019_231]),
            (Flow::Stokes, [0.022_936, 0.015_693, 0.003_769, 0.002_899]),
            (Flow::Brinkman { alpha: 3.0 }, [0.051_894, 0.035_506, 0.011_081, 0.008_524]),
        ];
        for (flow, values) in expected {
            for ((beta, biot), want) in cases.iter().zip(values) {
                let got = anisotropy_per_peclet_with_decay(flow, *biot, *beta).unwrap();
                assert!((got - want).abs() < 5e-7, "{flow:?}, β = {beta}, Bi = {biot}: {got:.7} vs {want}");
            }
        }
        for beta in [0.1, 0.5, 2.0, 7.0] {
            for flow in [Flow::Darcy, Flow::Stokes] {
                let closed = first_order_integral_with_decay(flow, beta).unwrap();
                let quadrature = decay_weighted_integral(flow, beta).unwrap();
                assert!(
                    rel_diff(closed, quadrature) < 1e-10,
                    "{flow:?}, β = {beta}: {closed} vs {quadrature}"
                );
            }
        }
        let brinkman = Flow::Brinkman { alpha: 3.0 };
        assert_eq!(
            first_order_integral_with_decay(brinkman, 0.0).unwrap(),
            first_order_integral(brinkman).unwrap()
        );
    }

    /// REFERENCES.md E.4: "h(ρ) at ρ = 2: Darcy 0.4375 and Stokes 0.25" (Bi = 0); the closed forms against the
    /// variation-of-parameters quadrature; h → s/2 far away; ⟨C⟩_S = s − Pe s²/2.
    #[test]
    fn dipole_profiles_and_mean() {
        assert!((dipole_profile(Flow::Darcy, 0.0, 2.0).unwrap() - 0.4375).abs() < 1e-15);
        assert!((dipole_profile(Flow::Stokes, 0.0, 2.0).unwrap() - 0.25).abs() < 1e-15);
        for flow in [Flow::Darcy, Flow::Stokes] {
            for biot in [0.0, 0.6, 3.0] {
                for rho in [1.0, 1.5, 4.0] {
                    let closed = dipole_profile(flow, biot, rho).unwrap();
                    let quadrature = dipole_profile_by_quadrature(flow, biot, rho).unwrap();
                    assert!((closed - quadrature).abs() < 1e-10, "{flow:?}, Bi = {biot}, ρ = {rho}");
                }
            }
        }
        let far = dipole_profile(Flow::Brinkman { alpha: 2.0 }, 1.0, 1e4).unwrap();
        assert!((far - 0.25).abs() < 1e-4, "h(∞) = s/2: {far}");
        // Robin condition of the dipole: h'(1) = Bi h(1) (second-order one-sided difference).
        let flow = Flow::Brinkman { alpha: 2.0 };
        let (biot, d) = (0.8, 1e-3);
        let h = |rho: f64| dipole_profile(flow, biot, rho).unwrap();
        let slope = (-3.0 * h(1.0) + 4.0 * h(1.0 + d) - h(1.0 + 2.0 * d)) / (2.0 * d);
        let h1 = surface_dipole(flow, biot).unwrap();
        assert!((slope - biot * h1).abs() < 1e-5, "h'(1) = {slope}, Bi h(1) = {}", biot * h1);
        assert!((mean_surface_concentration(0.02, 1.0).unwrap() - (0.5 - 0.0025)).abs() < 1e-16);
        assert!((front_back_contrast_per_peclet(Flow::Darcy, 0.0).unwrap() - 0.75).abs() < 1e-15);
    }
}
