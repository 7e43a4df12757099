//! Anisotropy of an isolated reflecting secreting sphere in Darcy flow against the first-order term of the
//! regular low-Péclet expansion, `A = Pe/8` with `Pe = Ua/D` (shared/REFERENCES.md item E.3 [derived there and
//! verified by an independent PDE solve]).
//!
//! The O(Pe²) remainder is a relative deviation of about −0.5·Pe (REFERENCES.md E.4: A/Pe = 0.122529 at
//! Pe = 0.04 against 0.125), so the first-order comparison allows 5% at Pe = 0.05 and 15% at Pe = 0.2; the
//! sharp test is the linear extrapolation of A/Pe from the two Péclet numbers to Pe → 0, which must give 1/8
//! within 3% (discretisation at a/h ≥ 6 and the ±10a far-field box included).

use super::setup::{darcy, far_field_box, isolated_sphere, solve};
use super::{Check, Tier, VerifyError};
use crate::reference::low_peclet;
use solver::problem::{LigandParameters, SurfaceUptake};

const RADIUS: f64 = 8e-6;
const DIFFUSIVITY: f64 = 1e-10;
const SOURCE: &str = "regular low-Pe expansion, first order (REFERENCES.md E.3, derived)";

pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let resolution = match tier {
        // a/h = 6: the coarsest grid whose discretisation error of A sits well inside the tolerance.
        Tier::Quick => 6.0,
        Tier::Full => 8.0,
    };
    let pecletes = [0.05, 0.2];
    let ligand = LigandParameters {
        diffusivity: DIFFUSIVITY,
        decay_rate: 0.0,
        inlet_concentration: 0.0,
        uptake: SurfaceUptake::None,
    };
    let first_order_slope = low_peclet::anisotropy_per_peclet(low_peclet::Flow::Darcy, 0.0)?;
    let mut measured = Vec::new();
    let mut checks = Vec::new();
    for (pe, tolerance) in pecletes.iter().zip([0.05, 0.15]) {
        let speed = pe * DIFFUSIVITY / RADIUS;
        let (grid, layout) = isolated_sphere(RADIUS, resolution, 10.0, 1.0);
        let solution = solve(&grid, &layout, far_field_box(), darcy(1e-14, speed), ligand)?;
        let a = solution.sensing[0].anisotropy_along_flow;
        measured.push(a / pe);
        let case = format!("Darcy, reflecting, Pe = {pe} (a/h = {resolution}, box ±10a)");
        checks.push(Check::new(&case, "anisotropy along flow", a, first_order_slope * pe, tolerance, SOURCE));
    }
    // A/Pe = c0 + c1 Pe through the two points; c0 is the first-order coefficient.
    let (p1, p2) = (pecletes[0], pecletes[1]);
    let c0 = (measured[0] * p2 - measured[1] * p1) / (p2 - p1);
    checks.push(Check::new(
        &format!("Darcy, reflecting, Pe -> 0 (a/h = {resolution})"),
        "A/Pe extrapolated from Pe = 0.05, 0.2",
        c0,
        first_order_slope,
        0.03,
        SOURCE,
    ));
    Ok(checks)
}
