//! Two reflecting secreting spheres without flow: each sees an anisotropy pointing at the other.
//!
//! Reference [derived here by the method of reflections, from the exact isolated field ν/(4πDr) of item D]:
//! a reflecting sphere in an outside harmonic field keeps its l = 0 part and multiplies the l-th surface
//! harmonic by (2l + 1)/(l + 1) (no-flux condition). Sphere 2's field at sphere 1 has the l = 1 part
//! `(ν/4πD) r cosθ/R²`, so the first reflection gives `⟨c cosθ⟩ = νa/(8πDR²)`; the dipole sphere 2 forms in
//! sphere 1's field (second reflection) adds `(a/R)³` to it and `(a/R)⁴/2` (in units of ν/(4πDa)) to the mean:
//!
//! ```text
//! A = ⟨c cosθ⟩/⟨c⟩ = ½ (a/R)² [1 + (a/R)³] / [1 + a/R + ½ (a/R)⁴] + O((a/R)⁷)
//! ```
//!
//! (relative error O((a/R)⁵): 0.4% at R = 3a). Sign exact: towards the other sphere. Expected numerical error:
//! a few per cent at a/h = 5 (the anisotropy is a small difference of surface values; measured, see the table).

use super::setup::{far_field_box, solve, OFF_GRID};
use super::{Check, Tier, VerifyError};
use mesh::{Cell, Grid, Layout};
use solver::problem::{FlowParameters, LigandParameters, MediumModel, SurfaceUptake};

const RADIUS: f64 = 8e-6;
const SOURCE: &str = "method of reflections, second reflection, O((a/R)^5) (derived in two_spheres.rs)";

/// First and second reflection, `½ (a/R)² [1 + (a/R)³] / [1 + a/R + ½ (a/R)⁴]`.
pub fn reflection_anisotropy(radius: f64, distance: f64) -> f64 {
    let e = radius / distance;
    0.5 * e * e * (1.0 + e.powi(3)) / (1.0 + e + 0.5 * e.powi(4))
}

/// Solves two equal spheres `distance` apart along x in a far-field box reaching `margin_radii` radii beyond
/// them; returns the anisotropy of each towards the other.
pub fn solve_pair(
    distance: f64,
    radius_in_spacings: f64,
    margin_radii: f64,
) -> Result<[f64; 2], VerifyError> {
    let h = RADIUS / radius_in_spacings;
    let along = ((distance + 2.0 * margin_radii * RADIUS) / h).round() as usize;
    let across = ((2.0 * margin_radii * RADIUS) / h).round() as usize;
    let grid = Grid::new([0.0; 3], h, [along, across, across]);
    let centre = [0, 1, 2].map(|a| 0.5 * grid.shape[a] as f64 * h + OFF_GRID[a] * h);
    let cell = |id: usize, dx: f64| Cell {
        id,
        centre: [centre[0] + dx, centre[1], centre[2]],
        radius: RADIUS,
        secretion_rate: 1.0,
    };
    let layout = Layout { cells: vec![cell(0, -0.5 * distance), cell(1, 0.5 * distance)] };
    let flow = FlowParameters {
        medium: MediumModel::Darcy { viscosity: 1e-3, permeability: 1e-14 },
        mean_velocity: 0.0,
    };
    let ligand = LigandParameters {
        diffusivity: 1e-10,
        decay_rate: 0.0,
        inlet_concentration: 0.0,
        uptake: SurfaceUptake::None,
    };
    let solution = solve(&grid, &layout, far_field_box(), flow, ligand)?;
    Ok([solution.sensing[0].anisotropy[0], -solution.sensing[1].anisotropy[0]])
}

/// Box margin beyond the spheres (in radii): the far-field condition treats the pair as one point source at
/// its centroid, which is only accurate at distances beyond the separation; with a fixed 6a margin the
/// R = 10a anisotropy came out 45% low (measured), so the margin grows with the separation.
pub fn margin_radii(distance_radii: f64) -> f64 {
    distance_radii.max(6.0)
}

pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let (resolution, distances): (f64, &[f64]) = match tier {
        // At a/h = 5 the anisotropy carries an absolute discretisation error of about 4e-4 (measured at 5a and
        // 10a): 3% of the signal at 5a but 4–8% at 10a (4.36e-3, 4.17e-3 against 4.55e-3), so 10a is checked
        // only on the finer grid of the full tier.
        Tier::Quick => (5.0, &[3.0, 5.0]),
        Tier::Full => (8.0, &[3.0, 4.0, 6.0, 10.0]),
    };
    let mut checks = Vec::new();
    for &d in distances {
        let distance = d * RADIUS;
        let margin = margin_radii(d);
        let [a1, a2] = solve_pair(distance, resolution, margin)?;
        let reference = reflection_anisotropy(RADIUS, distance);
        for (which, a) in [("sphere 1", a1), ("sphere 2", a2)] {
            let mut check = Check::new(
                &format!("two reflecting spheres, R = {d}a, no flow (a/h = {resolution}, margin {margin}a)"),
                &format!("{which}: anisotropy towards the other"),
                a,
                reference,
                0.05,
                SOURCE,
            );
            // The sign is exact.
            check.passed = check.passed && a > 0.0;
            checks.push(check);
        }
    }
    Ok(checks)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn anisotropy_points_at_the_other_sphere_with_the_reflection_magnitude() {
        // R = 3a and 5a at a/h = 5, as in the quick tier of `verify` (10a needs the full tier's finer grid).
        for d in [3.0, 5.0] {
            let [a1, a2] = solve_pair(d * RADIUS, 5.0, margin_radii(d)).unwrap();
            let reference = reflection_anisotropy(RADIUS, d * RADIUS);
            eprintln!("R = {d}a: anisotropy {a1:.5e}, {a2:.5e}; reflections {reference:.5e}");
            for a in [a1, a2] {
                assert!(a > 0.0, "R = {d}a: anisotropy {a} does not point at the other sphere");
                assert!(
                    ((a - reference) / reference).abs() < 0.05,
                    "R = {d}a: {a:.5e} vs reflections {reference:.5e}"
                );
            }
        }
    }

    /// R = 10a on the full tier's grid (a/h = 8, margin 10a): 6 million grid cells, so behind `--ignored`.
    /// Known failure (measured 2026-12-02): 4.29e-3 and 4.24e-3 against 4.55e-3 (6–7% low), barely moved from
    /// a/h = 5 (4.36e-3, 4.17e-3): the error is not the grid but the far-field box, whose Robin condition sees
    /// the pair as one point source at its centroid. Open until the far field uses the sources' own positions.
    #[test]
    #[ignore]
    fn ten_radii_apart_on_the_fine_grid() {
        let d = 10.0;
        let [a1, a2] = solve_pair(d * RADIUS, 8.0, margin_radii(d)).unwrap();
        let reference = reflection_anisotropy(RADIUS, d * RADIUS);
        eprintln!("R = {d}a, a/h = 8: anisotropy {a1:.5e}, {a2:.5e}; reflections {reference:.5e}");
        for a in [a1, a2] {
            assert!(a > 0.0 && ((a - reference) / reference).abs() < 0.05, "{a:.5e} vs {reference:.5e}");
        }
    }
}
