//! Molecule balance of one implicit step (shared/REFERENCES.md item F, in time): at tₙ₊₁
//! `secreted = outflow + uptake + decay + accumulation`, with accumulation the BDF rate of change of the stored
//! amount `Σ φh³ (α₀cⁿ⁺¹ + α₁cⁿ + α₂cⁿ⁻¹)/Δt`. Every term is evaluated with exactly the discrete forms the step
//! solved, so the imbalance is the sum of the linear residual: it closes to the solver tolerance.

use crate::transport::chamber_faces::BoundaryExchange;
use crate::transport::surface_exchange::FacetExchange;

/// Terms of the balance at one time (molecules/s; `stored` in molecules).
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct StepBalance {
    pub secreted: f64,
    /// Net outflow through the chamber faces (far field included).
    pub outflow: f64,
    pub uptake: f64,
    pub decay: f64,
    /// Rate of change of the amount stored in the fluid.
    pub accumulation: f64,
    /// Amount in the fluid `Σ φh³ c` (molecules).
    pub stored: f64,
    /// |secreted − outflow − uptake − decay − accumulation| / (secreted + gross inflow + |accumulation|).
    pub relative_error: f64,
}

/// Everything the balance needs about the step.
pub struct BalanceForms<'a> {
    pub facets: &'a [FacetExchange],
    pub boundary: &'a [BoundaryExchange],
    /// Far-field faces: (grid cell, outflow coefficient) of this time.
    pub far_field: &'a [(usize, f64)],
    pub decay: &'a [f64],
    pub fluid_volume: &'a [f64],
}

/// Amount of ligand in the fluid, `Σ φh³ c` (molecules).
pub fn stored_amount(fluid_volume: &[f64], c: &[f64]) -> f64 {
    fluid_volume.iter().zip(c).map(|(v, c)| v * c).sum()
}

/// The balance of the step that produced `c_new` with `alpha` and `dt`, given the amounts stored in the history
/// [cⁿ, cⁿ⁻¹] ([`stored_amount`]; a time loop keeps them from the steps that made those solutions).
pub fn step_balance(
    forms: &BalanceForms,
    c_new: &[f64],
    history_stored: [Option<f64>; 2],
    alpha: [f64; 3],
    dt: f64,
) -> StepBalance {
    let secreted: f64 = forms.facets.iter().map(|f| f.secretion).sum();
    let uptake: f64 = forms.facets.iter().map(|f| f.uptake.evaluate(c_new)).sum();
    let decay: f64 = forms.decay.iter().zip(c_new).map(|(k, c)| k * c).sum();
    let mut outflow = 0.0;
    let mut gross_inflow = 0.0;
    for b in forms.boundary {
        let q = b.outflow(c_new);
        outflow += q;
        gross_inflow += (-q).max(0.0);
    }
    for &(cell, coefficient) in forms.far_field {
        let q = coefficient * c_new[cell];
        outflow += q;
        gross_inflow += (-q).max(0.0);
    }
    let stored = stored_amount(forms.fluid_volume, c_new);
    let mut change = alpha[0] * stored;
    for (a, past) in alpha[1..].iter().zip(history_stored) {
        if let Some(amount) = past {
            change += a * amount;
        }
    }
    let accumulation = change / dt;
    let imbalance = secreted - outflow - uptake - decay - accumulation;
    let mut scale = secreted + gross_inflow + accumulation.abs();
    if scale == 0.0 {
        scale = stored / dt;
    }
    StepBalance {
        secreted,
        outflow,
        uptake,
        decay,
        accumulation,
        stored,
        relative_error: if scale > 0.0 { imbalance.abs() / scale } else { imbalance.abs() },
    }
}
