//! Global molecule balance of a steady solve (shared/REFERENCES.md item F, Gauss divergence theorem):
//! `secreted = outflow + uptake + decay (+ accumulation)`, evaluated with exactly the discrete fluxes of the
//! assembled system, so it closes to the solver tolerance, not merely to truncation error.

use crate::transport::decay::decay_sinks;
use crate::transport::TransportTerms;
use mesh::EmbeddedGeometry;

/// Terms of the balance (molecules/s).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MassBalance {
    pub secreted: f64,
    /// Net outflow through the chamber faces (outflow minus what the inlet carries in).
    pub outflow: f64,
    pub uptake: f64,
    pub decay: f64,
    pub accumulation: f64,
    /// |secreted − outflow − uptake − decay − accumulation| / (secreted + gross inflow).
    pub relative_error: f64,
}

/// The balance of the solution `c` of the terms `assembly` on `geometry`.
pub fn mass_balance(assembly: &TransportTerms, geometry: &EmbeddedGeometry, c: &[f64]) -> MassBalance {
    let secreted: f64 = assembly.facets.iter().map(|f| f.secretion).sum();
    let uptake: f64 = assembly.facets.iter().map(|f| f.uptake.evaluate(c)).sum();
    let decay: f64 = decay_sinks(geometry, assembly.decay_rate).zip(c).map(|(k, c)| k * c).sum();
    let mut outflow = 0.0;
    let mut gross_inflow = 0.0;
    for b in &assembly.boundary {
        let q = b.outflow(c);
        outflow += q;
        gross_inflow += (-q).max(0.0);
    }
    let accumulation = 0.0;
    let scale = secreted + gross_inflow;
    let imbalance = secreted - outflow - uptake - decay - accumulation;
    MassBalance {
        secreted,
        outflow,
        uptake,
        decay,
        accumulation,
        relative_error: if scale > 0.0 { imbalance.abs() / scale } else { imbalance.abs() },
    }
}
