//! Cheap estimates that stand beside the solve: the isolated-cell low-Péclet anisotropy, the mean-field
//! background along the chamber, and what a cell senses when it sits in that background.
//!
//! These are the product's own formulas (no dependence on the `validation` crate, which depends on this one);
//! they are tested against the independent implementations in `validation::reference` by
//! `validation/src/cases/meanfield_estimates.rs` and `tests/estimate_*.rs`.
//!
//! Symbols (shared/REFERENCES.md §0): a radius, D diffusivity, ν secretion per cell, κ uptake velocity,
//! k bulk decay, U superficial speed, `Pe = Ua/D`, `Bi = κa/D`, `β = a√(k/D)`, `c₀ = ν/(4πDa)`.

use super::counting_noise::front_back_contrast;
use crate::problem::{MediumModel, SurfaceUptake};
use numkit::GaussLegendre;
use std::f64::consts::PI;

/// The flow past an isolated cell, which sets the radial profile `g(ρ) = u_r/(U cosθ)` (REFERENCES.md B).
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum IsolatedFlow {
    /// Potential flow, `g = 1 − ρ⁻³`.
    Darcy,
    /// Stokes flow, `g = 1 − 3/(2ρ) + 1/(2ρ³)`.
    Stokes,
    /// Brinkman flow with `alpha` = a√(μ/(μ_e K)) > 0.
    Brinkman { alpha: f64 },
}

impl IsolatedFlow {
    /// The isolated-cell flow of a medium for cells of `radius` (m).
    pub fn of_medium(medium: &MediumModel, radius: f64) -> Self {
        match *medium {
            MediumModel::Darcy { .. } => IsolatedFlow::Darcy,
            MediumModel::Stokes { .. } => IsolatedFlow::Stokes,
            MediumModel::Brinkman { viscosity, permeability, effective_viscosity } => {
                IsolatedFlow::Brinkman {
                    alpha: radius * (viscosity / (effective_viscosity * permeability)).sqrt(),
                }
            }
        }
    }

    /// Name for reports ("darcy", "stokes", "brinkman").
    pub fn name(self) -> &'static str {
        match self {
            IsolatedFlow::Darcy => "darcy",
            IsolatedFlow::Stokes => "stokes",
            IsolatedFlow::Brinkman { .. } => "brinkman",
        }
    }

    /// `g(ρ) = u_r/(U cosθ)` at ρ = r/a ≥ 1 (Brinkman 1947 stream function, REFERENCES.md B):
    /// `g = 1 − A/ρ³ + B(1 + αρ)e^{−α(ρ−1)}/ρ³`, `A = 1 + 3/α + 3/α²`, `B = 3/α²`.
    pub fn radial_profile(self, rho: f64) -> f64 {
        let r3 = rho * rho * rho;
        match self {
            IsolatedFlow::Darcy => 1.0 - 1.0 / r3,
            IsolatedFlow::Stokes => 1.0 - 1.5 / rho + 0.5 / r3,
            IsolatedFlow::Brinkman { alpha } => {
                let a2 = alpha * alpha;
                let big_a = 1.0 + 3.0 / alpha + 3.0 / a2;
                let big_b = 3.0 / a2;
                1.0 - big_a / r3 + big_b * (1.0 + alpha * rho) * (-alpha * (rho - 1.0)).exp() / r3
            }
        }
    }
}

/// First-order coefficient `J_β = ∫₁^∞ g(t)(1 + βt)² e^{−2β(t−1)} t⁻² dt` (REFERENCES.md E.2/E.6 [derived
/// there]; Darcy `J_β = 3/4` for every β, Stokes `J_0 = 3/8`). Evaluated in closed form where one is exact and
/// otherwise by 5-point composite Gauss–Legendre quadrature in `s = 1/t` on (0, 1], refined until it changes
/// by < 1e-12.
pub fn first_order_coefficient(flow: IsolatedFlow, decay_number: f64) -> f64 {
    let beta = decay_number.max(0.0);
    match flow {
        IsolatedFlow::Darcy => return 0.75,
        IsolatedFlow::Stokes if beta == 0.0 => return 0.375,
        _ => {}
    }
    let integrand = |s: f64| {
        if s <= 0.0 {
            return 0.0;
        }
        let t = 1.0 / s;
        let w = 1.0 + beta * t;
        flow.radial_profile(t) * w * w * (-2.0 * beta * (t - 1.0)).exp()
    };
    let rule = GaussLegendre::new(5);
    let mut panels = 16;
    let mut previous = rule.integrate_composite(0.0, 1.0, panels, integrand);
    loop {
        panels *= 2;
        let next = rule.integrate_composite(0.0, 1.0, panels, integrand);
        if (next - previous).abs() <= 1e-12 * next.abs().max(1e-300) || panels >= 1 << 14 {
            return next;
        }
        previous = next;
    }
}

/// Surface Biot number `Bi = κa/D` of an uptake model; `None` for a perfect absorber (outside the expansion).
pub fn biot_number(uptake: SurfaceUptake, radius: f64, diffusivity: f64) -> Option<f64> {
    match uptake {
        SurfaceUptake::None => Some(0.0),
        SurfaceUptake::FirstOrder { rate_constant } => Some(rate_constant * radius / diffusivity),
        SurfaceUptake::Absorbing => None,
    }
}

/// First-order low-Péclet anisotropy `A = ⟨c cosθ⟩_S/⟨c⟩_S` of an isolated secreting sphere (REFERENCES.md
/// E.3 and E.6 [derived there, PDE-verified]): `A = Pe·J_β / (3[2 + 2β + β² + Bi(1 + β)])`. Valid for
/// Pe ≲ 0.1 (the O(Pe²) remainder is about −Pe/2 relative, E.4).
pub fn isolated_anisotropy(flow: IsolatedFlow, peclet: f64, biot: f64, decay_number: f64) -> f64 {
    let beta = decay_number;
    peclet * first_order_coefficient(flow, beta)
        / (3.0 * (2.0 + 2.0 * beta + beta * beta + biot * (1.0 + beta)))
}

/// First-order low-Péclet anisotropy `A = ⟨c cosθ⟩_S/⟨c⟩_S` of an isolated secreting sphere in Darcy flow with
/// surface uptake (Bi = κa/D) and bulk decay (β = a√(k/D)): `A = Pe·J_β / (3[2 + 2β + β² + Bi(1 + β)])` with
/// `J_β = 3/4`, `Pe = Ua/D` (REFERENCES.md E.3 and E.6). For κ = 0 and k = 0, A = Pe/8. Absorbing surfaces are
/// outside this expansion: returns `None`.
pub fn isolated_darcy_anisotropy(
    speed: f64,
    radius: f64,
    diffusivity: f64,
    decay_rate: f64,
    uptake: SurfaceUptake,
) -> Option<f64> {
    let bi = biot_number(uptake, radius, diffusivity)?;
    let beta = radius * (decay_rate / diffusivity).sqrt();
    Some(isolated_anisotropy(IsolatedFlow::Darcy, speed * radius / diffusivity, bi, beta))
}

/// The cells, homogenised (REFERENCES.md G): each releases `ν/(1 + Bi)` net and binds the background at
/// `k_on = 4πDa·Bi/(1 + Bi)`; a perfect absorber recaptures its own secretion and binds at `4πDa`.
/// Returns `(S, k_eff)`: source per unit chamber volume (molecules m⁻³ s⁻¹) and sink rate (1/s), with the bulk
/// decay acting on the fluid fraction `fluid_fraction`.
pub fn homogenised_source_and_sink(
    number_density: f64,
    secretion_rate: f64,
    radius: f64,
    diffusivity: f64,
    decay_rate: f64,
    uptake: SurfaceUptake,
    fluid_fraction: f64,
) -> (f64, f64) {
    let smoluchowski = 4.0 * PI * diffusivity * radius;
    let (release, k_on) = match biot_number(uptake, radius, diffusivity) {
        Some(bi) => (secretion_rate / (1.0 + bi), smoluchowski * bi / (1.0 + bi)),
        None => (0.0, smoluchowski),
    };
    (number_density * release, fluid_fraction * decay_rate + number_density * k_on)
}

/// What happens at the upstream end of the 1-D column.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ColumnInlet {
    /// Total flux prescribed, `U c − D c' = U c_in` (Danckwerts 1953 [memory]; REFERENCES.md G).
    Danckwerts,
    /// Concentration prescribed, `c(0) = c_in` — what the chamber's `inlet` face does (DESIGN.md, chamber_faces).
    Dirichlet,
}

/// Mean-field background: steady `D c'' − U c' − k_eff c + S = 0` on 0 < x < L with `c'(L) = 0` and the inlet
/// condition [`ColumnInlet`] (REFERENCES.md G [derived there]). The solution is `S/k_eff + P e^{m₁(x−L)} +
/// Q e^{m₂x}`, `m₁,₂ = (U ± √(U² + 4k_eff D))/(2D)`, written so that nothing overflows at large `UL/D`;
/// closed forms without sink or without dispersion.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MeanFieldColumn {
    /// L (m) > 0.
    pub length: f64,
    /// Superficial speed U (m/s) > 0.
    pub speed: f64,
    /// Longitudinal dispersion D (m²/s) ≥ 0; 0 is plug flow.
    pub dispersion: f64,
    /// k_eff (1/s) ≥ 0.
    pub sink_rate: f64,
    /// S (molecules m⁻³ s⁻¹).
    pub source_density: f64,
    /// c_in (molecules/m³).
    pub inlet_concentration: f64,
    pub inlet: ColumnInlet,
}

impl MeanFieldColumn {
    /// `(m₁, m₂, P, Q)` of the D > 0, k_eff > 0 solution.
    fn sink_terms(&self) -> (f64, f64, f64, f64) {
        let (u, d, k, l) = (self.speed, self.dispersion, self.sink_rate, self.length);
        let root = (u * u + 4.0 * k * d).sqrt();
        let m1 = (u + root) / (2.0 * d);
        let m2 = -2.0 * k / (u + root); // (U − root)/(2D) without cancellation
                                        // Outlet c'(L) = 0: P m₁ + Q m₂ e^{m₂L} = 0, so P = ratio·Q.
        let ratio = -m2 * (m2 * l).exp() / m1;
        let excess = self.inlet_concentration - self.source_density / k;
        let e1 = (-m1 * l).exp();
        let q = match self.inlet {
            ColumnInlet::Danckwerts => u * excess / ((u - d * m2) + ratio * e1 * (u - d * m1)),
            ColumnInlet::Dirichlet => excess / (1.0 + ratio * e1),
        };
        (m1, m2, ratio * q, q)
    }

    /// Background concentration c(x) (molecules/m³), 0 ≤ x ≤ L.
    pub fn concentration(&self, x: f64) -> f64 {
        let (u, d, k, l, s, c_in) = self.parts();
        match (d > 0.0, k > 0.0) {
            (false, false) => c_in + s * x / u,
            (false, true) => {
                let e = (-k * x / u).exp();
                s / k * (1.0 - e) + c_in * e
            }
            (true, false) => match self.inlet {
                ColumnInlet::Danckwerts => c_in + s / u * (x - d / u * (-u * (l - x) / d).exp_m1()),
                ColumnInlet::Dirichlet => {
                    c_in + s / u * (x - d / u * ((u * (x - l) / d).exp() - (-u * l / d).exp()))
                }
            },
            (true, true) => {
                let (m1, m2, p, q) = self.sink_terms();
                s / k + p * (m1 * (x - l)).exp() + q * (m2 * x).exp()
            }
        }
    }

    /// Background gradient dc/dx (molecules/m⁴).
    pub fn gradient(&self, x: f64) -> f64 {
        let (u, d, k, l, s, c_in) = self.parts();
        match (d > 0.0, k > 0.0) {
            (false, false) => s / u,
            (false, true) => (s - k * c_in) / u * (-k * x / u).exp(),
            // The same for both inlets: only the constant differs.
            (true, false) => s / u * (1.0 - (u * (x - l) / d).exp()),
            (true, true) => {
                let (m1, m2, p, q) = self.sink_terms();
                p * m1 * (m1 * (x - l)).exp() + q * m2 * (m2 * x).exp()
            }
        }
    }

    /// c(L) (molecules/m³).
    pub fn outlet_concentration(&self) -> f64 {
        self.concentration(self.length)
    }

    fn parts(&self) -> (f64, f64, f64, f64, f64, f64) {
        (
            self.speed,
            self.dispersion,
            self.sink_rate,
            self.length,
            self.source_density,
            self.inlet_concentration,
        )
    }
}

/// Mean-field background at the outlet of a chamber of length `length` along the flow, plug flow with a uniform
/// net source and a first-order sink (REFERENCES.md G; Danckwerts 1953 inlet [memory]):
/// `c(L) = (S/k_eff)(1 − e^{−k_eff L/U}) + c_in e^{−k_eff L/U}`, or `c_in + S L/U` without sink.
/// `number_density` in cells/m^3 of chamber, `fluid_fraction` the fluid volume fraction, `speed` the superficial
/// velocity U > 0. Returns molecules/m^3; `None` when U = 0 (no plug flow).
#[allow(clippy::too_many_arguments)]
pub fn meanfield_outlet_concentration(
    number_density: f64,
    secretion_rate: f64,
    radius: f64,
    diffusivity: f64,
    decay_rate: f64,
    uptake: SurfaceUptake,
    fluid_fraction: f64,
    speed: f64,
    length: f64,
    inlet_concentration: f64,
) -> Option<f64> {
    if speed <= 0.0 {
        return None;
    }
    let (source, sink) = homogenised_source_and_sink(
        number_density,
        secretion_rate,
        radius,
        diffusivity,
        decay_rate,
        uptake,
        fluid_fraction,
    );
    let column = MeanFieldColumn {
        length,
        speed,
        dispersion: 0.0,
        sink_rate: sink,
        source_density: source,
        inlet_concentration,
        inlet: ColumnInlet::Danckwerts,
    };
    Some(column.outlet_concentration())
}

/// One cell as the estimates see it (SI).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CellEstimateInputs {
    pub radius: f64,
    pub secretion_rate: f64,
    pub diffusivity: f64,
    pub decay_rate: f64,
    pub uptake: SurfaceUptake,
    /// Superficial speed of the undisturbed flow at the cell (m/s).
    pub speed: f64,
    pub flow: IsolatedFlow,
    /// Counting time T (s).
    pub integration_time: f64,
}

/// What the estimates say a cell senses, in the same units and conventions as the measured columns.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SensingEstimate {
    /// Mean-field background at the cell (molecules/m³).
    pub background: f64,
    /// Area-mean surface concentration (molecules/m³).
    pub mean_surface_concentration: f64,
    /// Anisotropy of the sensed flux along the flow.
    pub anisotropy_along_flow: f64,
    /// Expected front–back contrast `(3/2)A` (REFERENCES.md H).
    pub front_back_contrast: f64,
    /// Expected counts over T (both hemispheres).
    pub counts: f64,
    /// Poisson standard error of the contrast over its magnitude.
    pub direction_error: f64,
}

/// A cell in a background `c_bg` with gradient `G = dc_bg/dx` along the flow, superposed by linearity
/// [derived here, from REFERENCES.md D, E.3 and E.6]:
///
/// ```text
/// ⟨c⟩_S        = c₀/(1 + β + Bi) + c_bg/(1 + Bi)
/// ⟨c cosθ⟩_S   = A_iso·c₀/(1 + β + Bi)                       own cloud carried by the flow (E.3/E.6)
///              − Bi·c_bg·Pe·J/(3(1 + Bi)(2 + Bi))            uptake of the background, carried by the flow
///              + G a/(2 + Bi)                                 the background gradient, reflected by the sphere
/// A = ⟨c cosθ⟩_S/⟨c⟩_S,   contrast = (3/2)A,   N = T·(count rate)
/// ```
///
/// The second line is the secretion problem with the strength `−Bi·c_bg·4πDa` (the disturbance a Robin sphere
/// makes in a uniform background satisfies the secretion problem with that flux); the third is a sphere with
/// the Robin condition in a linear field `G x`, whose surface value is `3Ga cosθ/(2 + Bi)`. Decay enters the
/// own cloud only (background terms at β = 0). Counting rate as in `integrate_surface`: `κ·4πa²⟨c⟩` for first-
/// order uptake, the Smoluchowski-equivalent `4πDa⟨c⟩` for a reflecting cell. `None` for a perfect absorber.
pub fn estimate_cell_sensing(
    cell: &CellEstimateInputs,
    background: f64,
    gradient: f64,
) -> Option<SensingEstimate> {
    let (a, d) = (cell.radius, cell.diffusivity);
    let bi = biot_number(cell.uptake, a, d)?;
    let beta = a * (cell.decay_rate / d).sqrt();
    let pe = cell.speed * a / d;
    let c0 = cell.secretion_rate / (4.0 * PI * d * a);
    let own = c0 / (1.0 + beta + bi);
    let mean = own + background / (1.0 + bi);
    let j0 = first_order_coefficient(cell.flow, 0.0);
    let dipole = isolated_anisotropy(cell.flow, pe, bi, beta) * own
        - bi * background * pe * j0 / (3.0 * (1.0 + bi) * (2.0 + bi))
        + gradient * a / (2.0 + bi);
    let anisotropy = if mean > 0.0 { dipole / mean } else { 0.0 };
    let rate_per_concentration = match cell.uptake {
        SurfaceUptake::FirstOrder { rate_constant } => rate_constant * 4.0 * PI * a * a,
        _ => 4.0 * PI * d * a,
    };
    let counts = rate_per_concentration * mean * cell.integration_time;
    let contrast = (1.5 * anisotropy).clamp(-1.0, 1.0);
    let (contrast, direction_error) =
        front_back_contrast(0.5 * counts * (1.0 + contrast), 0.5 * counts * (1.0 - contrast));
    Some(SensingEstimate {
        background,
        mean_surface_concentration: mean,
        anisotropy_along_flow: anisotropy,
        front_back_contrast: contrast,
        counts,
        direction_error,
    })
}

/// Relative size of the terms the mean field leaves out that [`mean_field_max_volume_fraction`] allows.
pub const MEAN_FIELD_NEGLECTED_SHARE: f64 = 0.25;

/// Volume fraction up to which the per-cell mean-field estimate is expected to hold: where the first-order
/// (in φ) terms it leaves out reach [`MEAN_FIELD_NEGLECTED_SHARE`] of the kept ones. Two such terms:
///
/// - *Obstruction.* Neighbours are impermeable: the medium between the cells conducts diffusion as
///   `D_eff/D = 2(1 − φ)/(2 + φ) = 1 − 3φ/2 + O(φ²)` (Maxwell 1873, dilute suspension of insulating spheres;
///   from memory), while the estimate uses D for the own cloud and the background alike. 3φ/2 = ε gives φ = 2ε/3.
/// - *Screening by the neighbours' uptake.* Each neighbour binds at `k_on = 4πDa·Bi/(1 + Bi)` (REFERENCES.md G),
///   so n of them remove ligand like a bulk decay k = n·k_on, whose decay number is
///   `β_n² = a²·n·k_on/D = 3φ·Bi/(1 + Bi)`; the own cloud's anisotropy then falls by the factor
///   `(2 + Bi)/(2 + 2β + β² + Bi(1 + β))` ≈ 1 − β for small Bi (REFERENCES.md E.6) — a share β_n of it. β_n = ε
///   gives φ = ε²(1 + Bi)/(3Bi); a perfect absorber (Bi → ∞) ε²/3.
///
/// With ε = 0.25: φ ≤ min(1/6, (1 + Bi)/(48 Bi)). `biot` `None` is a perfect absorber. Pair correlations beyond
/// the excluded volume and the neighbours' random contributions to a cell's gradient are of higher order in φ
/// or average out over the cells; they are not counted.
pub fn mean_field_max_volume_fraction(biot: Option<f64>) -> f64 {
    let eps = MEAN_FIELD_NEGLECTED_SHARE;
    let obstruction = 2.0 * eps / 3.0;
    let screening = match biot {
        Some(bi) if bi > 0.0 => eps * eps * (1.0 + bi) / (3.0 * bi),
        Some(_) => f64::INFINITY,
        None => eps * eps / 3.0,
    };
    obstruction.min(screening)
}
/// Cell Péclet number up to which the first-order isolated-cell anisotropy holds (its O(Pe²) term is 4 % at
/// Pe = 0.08, REFERENCES.md E).
pub const MEAN_FIELD_MAX_CELL_PECLET: f64 = 0.1;
/// Outlet layers of the 1-D column, in units of D/U: the outlet forces the background gradient to zero over a
/// layer of width D/U (the fast exponential of the column, e^(−Ux/D)); three widths leave e^(−3) ≈ 5 % of it.
pub const OUTLET_LAYERS: f64 = 3.0;

/// Where the mean-field estimate is expected to hold, by our criteria: volume fraction, cell Péclet number,
/// and, along a through-flow chamber, positions outside the outlet layer (chamber Péclet number `U L/D` of at
/// least twice [`OUTLET_LAYERS`], so that they make up at least half the chamber). Returns the criteria the case breaks, in words (empty:
/// inside the regime).
pub fn mean_field_regime_breaches(
    volume_fraction: f64,
    biot: Option<f64>,
    peclet_cell: f64,
    peclet_chamber: Option<f64>,
) -> Vec<String> {
    let mut breaches = Vec::new();
    let max_fraction = mean_field_max_volume_fraction(biot);
    if volume_fraction > max_fraction {
        breaches.push(format!(
            "volume fraction {volume_fraction:.3} > {max_fraction:.3} (neighbours obstruct and screen each cell's field)"
        ));
    }
    if peclet_cell > MEAN_FIELD_MAX_CELL_PECLET {
        breaches.push(format!(
            "cell Peclet number {peclet_cell:.3} > {MEAN_FIELD_MAX_CELL_PECLET} (first-order anisotropy)"
        ));
    }
    if let Some(pe) = peclet_chamber {
        if pe < 2.0 * OUTLET_LAYERS {
            breaches.push(format!(
                "chamber Peclet number {pe:.3} < {} (the outlet layer {OUTLET_LAYERS} D/U covers over half the chamber)",
                2.0 * OUTLET_LAYERS
            ));
        }
    }
    breaches
}

#[cfg(test)]
mod tests {
    #[test]
    fn regime_names_each_broken_criterion() {
        use super::mean_field_regime_breaches;
        let breaches = |phi, pe, pe_chamber| mean_field_regime_breaches(phi, Some(0.05), pe, pe_chamber);
        assert!(breaches(0.05, 0.05, Some(10.0)).is_empty());
        assert_eq!(breaches(0.05, 0.05, Some(5.0)).len(), 1, "the outlet layer covers 60 % of the chamber");
        let all = breaches(0.2, 0.2, Some(2.0));
        assert_eq!(all.len(), 3, "{all:?}");
        assert!(all[0].contains("volume fraction") && all[2].contains("outlet layer"));
        assert!(breaches(0.05, 0.05, None).is_empty());
        // Strong uptake screens first: at Bi = 1 the bound is (1 + 1)/48 ≈ 0.042, below the 0.05 of the layout.
        assert_eq!(mean_field_regime_breaches(0.05, Some(1.0), 0.05, None).len(), 1);
        assert!(mean_field_regime_breaches(0.05, None, 0.05, None)[0].contains("volume fraction"));
    }

    #[test]
    fn volume_fraction_bound_from_the_neglected_terms() {
        use super::mean_field_max_volume_fraction as bound;
        // Obstruction alone (reflecting or weakly binding cells): 3φ/2 = 1/4 at φ = 1/6.
        assert!((bound(Some(0.0)) - 1.0 / 6.0).abs() < 1e-15);
        assert!((bound(Some(0.05)) - 1.0 / 6.0).abs() < 1e-15);
        // Screening: β_n = √(3φ Bi/(1 + Bi)) = 1/4 at φ = (1 + Bi)/(48 Bi); at the bound, β_n is 1/4 exactly.
        for bi in [0.5, 1.0, 10.0] {
            let phi = bound(Some(bi));
            assert!((phi - (1.0 + bi) / (48.0 * bi)).abs() < 1e-15, "{bi}");
            assert!(((3.0 * phi * bi / (1.0 + bi)).sqrt() - 0.25).abs() < 1e-12);
        }
        // The crossover where the two are equal: (1 + Bi)/(48 Bi) = 1/6 at Bi = 1/7.
        assert!((bound(Some(1.0 / 7.0)) - 1.0 / 6.0).abs() < 1e-12);
        assert!(bound(Some(0.2)) < 1.0 / 6.0);
        // A perfect absorber: 1/48.
        assert!((bound(None) - 1.0 / 48.0).abs() < 1e-15);
    }

    use super::*;

    #[test]
    fn reflecting_darcy_anisotropy_is_pe_over_eight() {
        // shared/REFERENCES.md E.3: A_Darcy = Pe/8 (reflecting, no decay); Bi = 1 gives Pe/12.
        let a = isolated_darcy_anisotropy(1e-6, 1e-5, 1e-10, 0.0, SurfaceUptake::None).unwrap();
        assert!((a - 0.1 / 8.0).abs() < 1e-15);
        let a = isolated_darcy_anisotropy(
            1e-6,
            1e-5,
            1e-10,
            0.0,
            SurfaceUptake::FirstOrder { rate_constant: 1e-5 },
        )
        .unwrap();
        assert!((a - 0.1 / 12.0).abs() < 1e-15);
        // E.6 check value: Darcy, β = 0.5, Bi = 0 → A/Pe = 0.076923 (= 0.75/9.75).
        let k = 0.25 * 1e-10 / (1e-5f64).powi(2); // β = a√(k/D) = 0.5 with a = 1e-5 m, D = 1e-10 m^2/s
        let a = isolated_darcy_anisotropy(1e-6, 1e-5, 1e-10, k, SurfaceUptake::None).unwrap();
        assert!((a / 0.1 - 0.076923).abs() < 1e-6, "{}", a / 0.1);
    }

    #[test]
    fn first_order_coefficients_of_table_e3_and_e6() {
        // REFERENCES.md E.3 table: J(α) for Brinkman; E.6: Stokes with decay via A/Pe.
        for (alpha, j) in
            [(1.0, 0.526_369_739_1), (3.0, 0.615_467_376_6), (10.0, 0.691_374_977_3), (0.1, 0.404_945_090_5)]
        {
            let got = first_order_coefficient(IsolatedFlow::Brinkman { alpha }, 0.0);
            assert!((got - j).abs() < 1e-9, "J({alpha}) = {got}");
        }
        assert_eq!(first_order_coefficient(IsolatedFlow::Stokes, 0.0), 0.375);
        let stokes = isolated_anisotropy(IsolatedFlow::Stokes, 1.0, 0.0, 0.5);
        assert!((stokes - 0.022_936).abs() < 1e-6, "{stokes}");
        let brinkman = isolated_anisotropy(IsolatedFlow::Brinkman { alpha: 3.0 }, 1.0, 1.0, 2.0);
        assert!((brinkman - 0.008_524).abs() < 1e-6, "{brinkman}");
    }

    #[test]
    fn meanfield_outlet_without_sink_is_the_flux_balance() {
        // shared/REFERENCES.md G dimensional example: ρ = 1e5 /mL, ν = 10 /s, L = 1 cm, U = 1 um/s → 1.0e16 m^-3.
        let c = meanfield_outlet_concentration(
            1e11,
            10.0,
            5e-6,
            1e-10,
            0.0,
            SurfaceUptake::None,
            1.0,
            1e-6,
            1e-2,
            0.0,
        )
        .unwrap();
        assert!((c - 1.0e16).abs() < 1e4, "{c}");
    }

    #[test]
    fn column_satisfies_its_equation_and_boundary_conditions() {
        // Residual of D c'' − U c' − k c + S by central differences, and both boundary conditions.
        for inlet in [ColumnInlet::Danckwerts, ColumnInlet::Dirichlet] {
            for (d, k) in [(0.2, 0.0), (0.2, 1.5), (0.0, 0.7), (0.0, 0.0)] {
                let col = MeanFieldColumn {
                    length: 1.0,
                    speed: 1.0,
                    dispersion: d,
                    sink_rate: k,
                    source_density: 2.0,
                    inlet_concentration: 0.3,
                    inlet,
                };
                let h = 1e-4;
                for x in [0.2, 0.5, 0.9] {
                    let c = col.concentration(x);
                    let c1 = (col.concentration(x + h) - col.concentration(x - h)) / (2.0 * h);
                    assert!((c1 - col.gradient(x)).abs() < 1e-6, "{inlet:?} D={d} k={k}: gradient at {x}");
                    let c2 = (col.concentration(x + h) - 2.0 * c + col.concentration(x - h)) / (h * h);
                    let residual = d * c2 - c1 - k * c + 2.0;
                    assert!(residual.abs() < 1e-5, "{inlet:?} D={d} k={k}: residual {residual} at {x}");
                }
                if d > 0.0 {
                    assert!(col.gradient(1.0).abs() < 1e-12);
                    let inflow = col.concentration(0.0) - d * col.gradient(0.0);
                    match inlet {
                        ColumnInlet::Danckwerts => assert!((inflow - 0.3).abs() < 1e-12),
                        ColumnInlet::Dirichlet => assert!((col.concentration(0.0) - 0.3).abs() < 1e-12),
                    }
                }
            }
        }
    }

    #[test]
    fn isolated_cell_estimate_reduces_to_the_expansion() {
        // No background: A = A_iso, ⟨c⟩ = c₀/(1 + Bi) (REFERENCES.md D, E.3).
        let cell = CellEstimateInputs {
            radius: 1e-5,
            secretion_rate: 1.0,
            diffusivity: 1e-10,
            decay_rate: 0.0,
            uptake: SurfaceUptake::FirstOrder { rate_constant: 1e-5 },
            speed: 1e-7,
            flow: IsolatedFlow::Darcy,
            integration_time: 3600.0,
        };
        let e = estimate_cell_sensing(&cell, 0.0, 0.0).unwrap();
        assert!((e.anisotropy_along_flow - 0.01 / 12.0).abs() < 1e-15);
        let c0 = 1.0 / (4.0 * PI * 1e-10 * 1e-5);
        assert!((e.mean_surface_concentration - c0 / 2.0).abs() < 1e-6 * c0);
        // A reflecting cell in a pure gradient, no own secretion, no flow: A = G a/(2 c_bg) (surface 3Ga/2 cosθ).
        let quiet =
            CellEstimateInputs { secretion_rate: 0.0, speed: 0.0, uptake: SurfaceUptake::None, ..cell };
        let e = estimate_cell_sensing(&quiet, 1e15, 1e19).unwrap();
        assert!((e.anisotropy_along_flow - 1e19 * 1e-5 / 2e15).abs() < 1e-15);
        assert!(estimate_cell_sensing(
            &CellEstimateInputs { uptake: SurfaceUptake::Absorbing, ..cell },
            0.0,
            0.0
        )
        .is_none());
    }
}
