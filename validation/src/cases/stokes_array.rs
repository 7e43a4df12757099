//! Stokes flow through a simple-cubic array of spheres, driven by a mean pressure gradient: drag per sphere
//! against the Hasimoto (1959) / Sangani & Acrivos (1982) series (REFERENCES.md item I [memory for the
//! coefficients]). One sphere in a periodic box whose side L gives the volume fraction φ = (4/3)πa³/L³; the box is
//! driven to the mean superficial velocity U, and the force balance G L³ = F gives the drag per sphere.

use super::{Check, Tier, VerifyError};
use crate::reference::hasimoto;
use mesh::{Cell, EmbeddedGeometry, Grid, Layout};
use solver::flow::brinkman::{solve_brinkman, BrinkmanMedium, BrinkmanParams};
use solver::problem::{ChamberBoundaries, ChamberFace};
use solver::solve_case::CaseSolveError;
use std::f64::consts::PI;

const SOURCE: &str =
    "Hasimoto (1959) / Sangani & Acrivos (1982) simple-cubic series, REFERENCES.md I [memory]";

/// Drag per sphere (N) from the solver, from the series, the force balance G L³ and the iterations, for a
/// simple-cubic array at volume fraction `phi` with `per_radius` spacings per radius (a = μ = U = 1).
pub fn array_drag(phi: f64, per_radius: usize) -> Result<(f64, f64, f64, usize), VerifyError> {
    let radius = 1.0;
    let side_cells = ((4.0 * PI / (3.0 * phi)).cbrt() * per_radius as f64).round() as usize;
    let h = radius / per_radius as f64;
    let side = side_cells as f64 * h;
    let phi_grid = 4.0 * PI / 3.0 * radius.powi(3) / side.powi(3);
    let grid = Grid::new([0.0; 3], h, [side_cells; 3]);
    let layout = Layout { cells: vec![Cell { id: 0, centre: [0.5 * side; 3], radius, secretion_rate: 0.0 }] };
    let boundaries = ChamberBoundaries::new([[ChamberFace::Periodic; 2]; 3]);
    let geometry = EmbeddedGeometry::build(&grid, &layout, [true; 3]);
    let medium = BrinkmanMedium { viscosity: 1.0, effective_viscosity: 1.0, permeability: None };
    let solution = solve_brinkman(&geometry, &layout, &boundaries, &medium, 1.0, &BrinkmanParams::default())
        .map_err(|e| VerifyError::Solve(CaseSolveError::Brinkman(e)))?;
    let reference = hasimoto::drag_per_sphere(1.0, radius, 1.0, phi_grid)?;
    let balance = solution.field.pressure_drop / side * side.powi(3);
    Ok((solution.field.drag[0][0], reference, balance, solution.field.iterations))
}

/// φ = 0.01 and 0.05 at a/h = 6 (quick) or 8 (full), within 2%.
pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let per_radius = match tier {
        Tier::Quick => 6,
        Tier::Full => 8,
    };
    let mut checks = Vec::new();
    for phi in [0.01, 0.05] {
        let (drag, reference, _, _) = array_drag(phi, per_radius)?;
        let case = format!("Stokes simple-cubic array φ = {phi} (a/h = {per_radius})");
        checks.push(Check::new(&case, "drag per sphere (N)", drag, reference, 0.02, SOURCE));
    }
    Ok(checks)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cases::relative_error;

    /// The drag per sphere matches the series at two volume fractions, and equals the driving force G L³
    /// (the discrete momentum balance of the periodic cell).
    #[test]
    fn simple_cubic_array_drag_matches_the_series() {
        for phi in [0.01, 0.05] {
            let (drag, reference, balance, iterations) = array_drag(phi, 4).expect("solves");
            println!(
                "phi {phi}: drag/series {:.4}, balance/drag {:.6}, {iterations} it",
                drag / reference,
                balance / drag
            );
            assert!(relative_error(drag, reference) < 0.02, "φ {phi}: {drag} vs {reference}");
            assert!(relative_error(balance, drag) < 0.01, "φ {phi}: balance {balance} vs drag {drag}");
        }
    }
}
