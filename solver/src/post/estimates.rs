//! Cheap estimates that stand beside the solve: the isolated-cell low-Péclet anisotropy and the mean-field
//! background along the chamber.

use crate::problem::SurfaceUptake;

/// First-order low-Péclet anisotropy `A = ⟨c cosθ⟩_S/⟨c⟩_S` of an isolated secreting sphere in Darcy flow with
/// surface uptake (Bi = κa/D) and bulk decay (β = a√(k/D)):
/// `A = Pe·J_β / (3[2 + 2β + β² + Bi(1 + β)])` with `J_β = 3/4` for Darcy flow, `Pe = Ua/D`
/// (shared/REFERENCES.md items E.3 and E.6 [derived there, PDE-verified]). For κ = 0 and k = 0, A = Pe/8.
/// Absorbing surfaces are outside this expansion: returns `None`.
pub fn isolated_darcy_anisotropy(
    speed: f64,
    radius: f64,
    diffusivity: f64,
    decay_rate: f64,
    uptake: SurfaceUptake,
) -> Option<f64> {
    let bi = match uptake {
        SurfaceUptake::None => 0.0,
        SurfaceUptake::FirstOrder { rate_constant } => rate_constant * radius / diffusivity,
        SurfaceUptake::Absorbing => return None,
    };
    let pe = speed * radius / diffusivity;
    let beta = radius * (decay_rate / diffusivity).sqrt();
    Some(pe * 0.75 / (3.0 * (2.0 + 2.0 * beta + beta * beta + bi * (1.0 + beta))))
}

/// Mean-field background at the outlet of a chamber of length `length` along the flow, plug flow with a uniform
/// net source and a first-order sink (shared/REFERENCES.md item G; Danckwerts 1953 inlet [memory]):
/// `c(L) = (S/k_eff)(1 − e^{−k_eff L/U}) + c_in e^{−k_eff L/U}`, or `c_in + S L/U` without sink. Cells release
/// `ν/(1+Bi)` net and bind the background at `k_on = 4πDa·Bi/(1+Bi)` each; decay acts on the fluid fraction.
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
    let (release, k_on) = match uptake {
        SurfaceUptake::None => (secretion_rate, 0.0),
        SurfaceUptake::FirstOrder { rate_constant } => {
            let bi = rate_constant * radius / diffusivity;
            (secretion_rate / (1.0 + bi), 4.0 * std::f64::consts::PI * diffusivity * radius * bi / (1.0 + bi))
        }
        // A perfect absorber recaptures its own secretion and binds the background at the Smoluchowski rate.
        SurfaceUptake::Absorbing => (0.0, 4.0 * std::f64::consts::PI * diffusivity * radius),
    };
    let source = number_density * release;
    let k_eff = fluid_fraction * decay_rate + number_density * k_on;
    let tau = length / speed;
    Some(if k_eff > 0.0 {
        let e = (-k_eff * tau).exp();
        source / k_eff * (1.0 - e) + inlet_concentration * e
    } else {
        inlet_concentration + source * tau
    })
}

#[cfg(test)]
mod tests {
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
}
