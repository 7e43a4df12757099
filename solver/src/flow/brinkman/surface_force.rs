//! Force of the fluid on every cell, from the discrete momentum balance.
//!
//! Summing the momentum rows of all velocity unknowns in a region around one cell, the fluxes between unknowns
//! cancel and the pressure differences telescope; what remains besides the region's outer boundary is exactly
//! what the cell's surface exerts. So the discrete force on cell s is
//!
//! ```text
//! F_s,c = Σ_{cut links of component c to s} μ_e A/(θh) u_P          (viscous)
//!       + Σ_{grid cells P} h² p_P (n_low − n_high)                     (pressure)
//! ```
//!
//! where the pressure term counts, per cell P and axis c, +1 when P's low face along c carries an unknown and its
//! high face lies inside cell s (the pressure on the upstream side pushes s along +c), −1 for the mirror case.
//! This equals the surface integral of the traction `∮ (−p n + τ·n) dS` of the discrete solution taken over any
//! surface enclosing s alone (the "exact volume identity"), so it converges with the field, at the order
//! measured in the tests.

use super::assemble_momentum::MomentumBlock;
use super::pressure_gradient::PressureCoupling;
use super::sphere_index::SphereIndex;

/// Viscous and pressure parts of the force on each cell (N).
#[derive(Clone, Debug, PartialEq)]
pub struct SurfaceForces {
    pub viscous: Vec<[f64; 3]>,
    pub pressure: Vec<[f64; 3]>,
}

impl SurfaceForces {
    pub fn total(&self) -> Vec<[f64; 3]> {
        self.viscous
            .iter()
            .zip(&self.pressure)
            .map(|(v, p)| [v[0] + p[0], v[1] + p[1], v[2] + p[2]])
            .collect()
    }
}

/// Forces on `cells` cells from the solved velocity unknowns `u` and pressure `p` (Pa).
pub fn surface_forces(
    blocks: &[MomentumBlock; 3],
    coupling: &PressureCoupling,
    spheres: &SphereIndex,
    u: [&[f64]; 3],
    p: &[f64],
    cells: usize,
) -> SurfaceForces {
    let mut viscous = vec![[0.0; 3]; cells];
    let mut pressure = vec![[0.0; 3]; cells];
    for (c, block) in blocks.iter().enumerate() {
        for link in &block.wall_links {
            viscous[link.owner][c] += link.coefficient * u[c][link.unknown];
        }
    }
    let grid = &coupling.grid;
    let h2 = grid.face_area();
    for (cell, &active) in coupling.pressure_active.iter().enumerate() {
        if !active {
            continue;
        }
        let ijk = grid.ijk(cell);
        for c in 0..3 {
            let comp = &coupling.components[c];
            let (lo, hi) = comp.cell_faces(ijk);
            let (lo_on, hi_on) = (coupling.velocity_active[c][lo], coupling.velocity_active[c][hi]);
            if lo_on == hi_on {
                continue;
            }
            let closed = if lo_on { hi } else { lo };
            let mut x = comp.position(grid, comp.ijk(closed));
            // The wrapped high face of the last cell sits one period up.
            if lo_on && comp.periodic[c] && ijk[c] + 1 == grid.shape[c] {
                x[c] += grid.extent()[c];
            }
            if let Some(owner) = spheres.owner_at(x).filter(|&o| o < cells) {
                let sign = if lo_on { 1.0 } else { -1.0 };
                pressure[owner][c] += sign * h2 * p[cell];
            }
        }
    }
    SurfaceForces { viscous, pressure }
}
