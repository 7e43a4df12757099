//! Darcy flow past an impermeable sphere in a far-field box: the potential-flow solution (Lamb 1932 §92
//! [memory]; shared/REFERENCES.md item B) for the velocity and the drag `2πμa³U/K` (Brinkman 1947 in the Darcy
//! limit). The box imposes the undisturbed stream at ±6a, which perturbs the dipole by about (a/6a)³ ≈ 0.5%.

use super::setup::{darcy, far_field_box, isolated_sphere, solve};
use super::{observed_order, relative_error, Check, Tier, VerifyError};
use crate::reference::darcy_sphere;
use solver::problem::{LigandParameters, SurfaceUptake};

const RADIUS: f64 = 8e-6;
const PERMEABILITY: f64 = 1e-14;
const VISCOSITY: f64 = 1e-3;
const SPEED: f64 = 1e-6;
const SOURCE: &str = "Darcy potential flow past a sphere (Lamb 1932 §92 [memory]), REFERENCES.md B";

pub fn run(tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let resolutions: &[f64] = match tier {
        Tier::Quick => &[4.0, 8.0],
        Tier::Full => &[4.0, 8.0, 12.0],
    };
    let ligand = LigandParameters {
        diffusivity: 1e-10,
        decay_rate: 0.0,
        inlet_concentration: 0.0,
        uptake: SurfaceUptake::None,
    };
    let exact_drag = darcy_sphere::drag(VISCOSITY, RADIUS, SPEED, PERMEABILITY);
    let mut errors = Vec::new();
    let mut last = None;
    for &r in resolutions {
        let (grid, layout) = isolated_sphere(RADIUS, r, 6.0, 0.0);
        let solution = solve(&grid, &layout, far_field_box(), darcy(PERMEABILITY, SPEED), ligand)?;
        let drag = solution.flow.drag[0][0];
        errors.push(relative_error(drag, exact_drag));
        let centre = layout.cells[0].centre;
        let [u, _, _] = solution.flow.velocity(&grid);
        let sample = |offset: [f64; 3]| {
            let x = [0, 1, 2].map(|a| centre[a] + offset[a] * RADIUS);
            super::setup::interpolate_cell_field(&grid, &u, x)
        };
        last = Some((drag, sample([1.5, 0.0, 0.0]), sample([0.0, 1.5, 0.0])));
    }
    let Some((drag, downstream, side)) = last else { return Ok(Vec::new()) };
    let n = errors.len();
    let order = observed_order(errors[n - 2], errors[n - 1], resolutions[n - 1] / resolutions[n - 2]);
    let case = format!("Darcy sphere (a/h = {}, box ±6a)", resolutions[n - 1]);
    let (ur_down, _) = darcy_sphere::velocity_polar(SPEED, RADIUS, 1.5 * RADIUS, 0.0);
    let (_, ut_side) = darcy_sphere::velocity_polar(SPEED, RADIUS, 1.5 * RADIUS, std::f64::consts::FRAC_PI_2);
    let mut drag_check = Check::new(&case, "drag along the flow (N)", drag, exact_drag, 0.02, SOURCE);
    drag_check.observed_order = Some(order);
    Ok(vec![
        drag_check,
        Check::new(&case, "u_x at 1.5a downstream (m/s)", downstream, ur_down, 0.02, SOURCE),
        // At θ = 90° the x velocity is −u_θ.
        Check::new(&case, "u_x at 1.5a abeam (m/s)", side, -ut_side, 0.02, SOURCE),
    ])
}
