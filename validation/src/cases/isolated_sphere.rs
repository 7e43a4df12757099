//! An isolated secreting sphere without flow, in a far-field box: reflecting, with first-order uptake, and with
//! bulk decay. The exact solution `c(r) = ν e^{−β(r/a−1)} / (4πD a (1 + β + Bi)) · a/r` (shared/REFERENCES.md
//! item D, steady; Carslaw & Jaeger 1959 [memory for the section]) satisfies the far-field Robin condition of
//! the box exactly, so the only error left is the discretisation: its observed order is asserted.

use super::setup::{darcy, far_field_box, isolated_sphere, solve};
use super::{observed_order, relative_error, Check, Tier, VerifyError};
use crate::reference::sphere_steady::SecretingSphere;
use solver::problem::{LigandParameters, SurfaceUptake};

const RADIUS: f64 = 8e-6;
const DIFFUSIVITY: f64 = 1e-10;
const SECRETION: f64 = 1.0;
const SOURCE: &str = "Carslaw & Jaeger 1959 (steady sphere, Robin/decay), REFERENCES.md D";

struct Variant {
    name: &'static str,
    biot: f64,
    thiele: f64,
}

const VARIANTS: [Variant; 3] = [
    Variant { name: "reflecting sphere", biot: 0.0, thiele: 0.0 },
    Variant { name: "first-order uptake, Bi = 1", biot: 1.0, thiele: 0.0 },
    Variant { name: "bulk decay, beta = 1", biot: 0.0, thiele: 1.0 },
];

pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let resolutions: &[f64] = match tier {
        // The observed order is 1.71 between a/h = 6 and 12 (pre-asymptotic) and 1.87 between 12 and 24.
        Tier::Quick => &[8.0, 16.0],
        Tier::Full => &[8.0, 16.0, 32.0],
    };
    let mut checks = Vec::new();
    for v in &VARIANTS {
        let kappa = v.biot * DIFFUSIVITY / RADIUS;
        let decay = v.thiele * v.thiele * DIFFUSIVITY / (RADIUS * RADIUS);
        let uptake = if kappa > 0.0 {
            SurfaceUptake::FirstOrder { rate_constant: kappa }
        } else {
            SurfaceUptake::None
        };
        let ligand = LigandParameters {
            diffusivity: DIFFUSIVITY,
            decay_rate: decay,
            inlet_concentration: 0.0,
            uptake,
        };
        let exact = SecretingSphere::new(RADIUS, SECRETION, DIFFUSIVITY, kappa, decay)?;
        let exact_surface = exact.steady_surface_concentration();
        let exact_bound = exact.steady_bound_rate();
        let mut errors = Vec::new();
        let mut last = (0.0, 0.0);
        for &r in resolutions {
            let (grid, layout) = isolated_sphere(RADIUS, r, 2.5, SECRETION);
            let solution = solve(&grid, &layout, far_field_box(), darcy(1e-14, 0.0), ligand)?;
            let s = &solution.sensing[0];
            errors.push(relative_error(s.mean_surface_concentration, exact_surface));
            last = (s.mean_surface_concentration, s.bound_rate);
        }
        let n = errors.len();
        let order = observed_order(errors[n - 2], errors[n - 1], resolutions[n - 1] / resolutions[n - 2]);
        let case = format!("{} (a/h = {})", v.name, resolutions[n - 1]);
        checks.push(
            Check::new(&case, "mean surface concentration", last.0, exact_surface, 2e-3, SOURCE)
                .with_order(order, 1.8),
        );
        if kappa > 0.0 {
            checks.push(Check::new(&case, "bound rate", last.1, exact_bound, 2e-3, SOURCE));
        }
    }
    Ok(checks)
}
