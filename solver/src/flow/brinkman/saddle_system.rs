//! The coupled Brinkman system and its block preconditioner.
//!
//! Unknowns `[u_x, u_y, u_z, p̃]` with the pressure scaled, `p = s p̃`, and the continuity rows multiplied by the
//! same `s = 6 μ_e/h + (μ/K) h` so that every row has the size of a momentum row:
//!
//! ```text
//! [ A   s G ] [u]   [f    ]
//! [ s Gᵀ  0 ] [p̃] = [s g  ]
//! ```
//!
//! Preconditioner: block upper triangular `[A  sG; 0  −S̃]` (Elman, Silvester & Wathen 2005, *Finite Elements and
//! Fast Iterative Solvers*, ch. 8, from memory). `A⁻¹` is one multigrid V-cycle per component; the Schur
//! complement `S̃ = s² Gᵀ A⁻¹ G` is approximated as for the operator `σ − μ_e∇²` (Cahouet & Chabard 1988,
//! Int. J. Numer. Methods Fluids 8, 869–895, from memory):
//!
//! ```text
//! S⁻¹ ≈ σ h³ (Gᵀ G)⁻¹ + (μ_e/h³) I ,
//! ```
//!
//! the first part by one V-cycle of the pressure Poisson operator `GᵀG` (Neumann at walls and spheres, Dirichlet
//! at outlets). It is robust from the Stokes limit (σ = 0) to the Darcy limit (μ_e/σh² → 0).

use super::assemble_momentum::MomentumBlock;
use super::pressure_gradient::PressureCoupling;
use crate::linalg::apply_face_coupled;
use crate::linalg::multigrid::{Multigrid, MultigridWork};
use crate::linalg::{AdvectionScheme, FaceCoupledOperator, MultigridParams};
use rayon::prelude::*;

/// The assembled system with its preconditioner hierarchies.
pub struct SaddleSystem {
    pub blocks: [MomentumBlock; 3],
    pub coupling: PressureCoupling,
    /// Pressure scale s (Pa per unit of p̃).
    pub scale: f64,
    pub resistivity: f64,
    pub effective_viscosity: f64,
    offsets: [usize; 4],
    velocity_mg: [Multigrid; 3],
    pressure_mg: Multigrid,
    pressure_operator: FaceCoupledOperator,
}

/// Work vectors of one preconditioner application.
pub struct PreconditionerWork {
    velocity: [MultigridWork; 3],
    pressure: MultigridWork,
    gradient: Vec<f64>,
    schur: Vec<f64>,
}

impl SaddleSystem {
    pub fn new(
        blocks: [MomentumBlock; 3],
        coupling: PressureCoupling,
        effective_viscosity: f64,
        resistivity: f64,
        params: &MultigridParams,
    ) -> Self {
        let h = coupling.grid.spacing;
        let scale = 6.0 * effective_viscosity / h + resistivity * h;
        let sizes = [blocks[0].rhs.len(), blocks[1].rhs.len(), blocks[2].rhs.len(), coupling.grid.len()];
        let offsets = [0, sizes[0], sizes[0] + sizes[1], sizes[0] + sizes[1] + sizes[2]];
        let velocity_mg =
            [0, 1, 2].map(|c| Multigrid::new(&blocks[c].operator, AdvectionScheme::Central, params.clone()));
        let pressure_operator = pressure_poisson(&coupling);
        let pressure_mg = Multigrid::new(&pressure_operator, AdvectionScheme::Central, params.clone());
        SaddleSystem {
            blocks,
            coupling,
            scale,
            resistivity,
            effective_viscosity,
            offsets,
            velocity_mg,
            pressure_mg,
            pressure_operator,
        }
    }

    /// Length of the coupled vector.
    pub fn len(&self) -> usize {
        self.offsets[3] + self.coupling.grid.len()
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Ranges of `[u_x, u_y, u_z, p̃]` in the coupled vector.
    pub fn ranges(&self) -> [std::ops::Range<usize>; 4] {
        let end = self.len();
        [
            self.offsets[0]..self.offsets[1],
            self.offsets[1]..self.offsets[2],
            self.offsets[2]..self.offsets[3],
            self.offsets[3]..end,
        ]
    }

    fn split<'a>(&self, x: &'a [f64]) -> [&'a [f64]; 4] {
        let (u, rest) = x.split_at(self.offsets[1]);
        let (v, rest) = rest.split_at(self.offsets[2] - self.offsets[1]);
        let (w, p) = rest.split_at(self.offsets[3] - self.offsets[2]);
        [u, v, w, p]
    }

    fn split_mut<'a>(&self, x: &'a mut [f64]) -> [&'a mut [f64]; 4] {
        let (u, rest) = x.split_at_mut(self.offsets[1]);
        let (v, rest) = rest.split_at_mut(self.offsets[2] - self.offsets[1]);
        let (w, p) = rest.split_at_mut(self.offsets[3] - self.offsets[2]);
        [u, v, w, p]
    }

    /// `y = K x`; inactive rows are the identity.
    pub fn apply(&self, x: &[f64], y: &mut [f64]) {
        let xs = self.split(x);
        let [yu, yv, yw, yp] = self.split_mut(y);
        let mut grad = vec![0.0; yu.len().max(yv.len()).max(yw.len())];
        for (c, yc) in [yu, yv, yw].into_iter().enumerate() {
            apply_face_coupled(&self.blocks[c].operator, AdvectionScheme::Central, xs[c], yc);
            let g = &mut grad[..yc.len()];
            self.coupling.gradient(c, xs[3], self.scale, g);
            yc.par_iter_mut().zip(g.par_iter()).for_each(|(y, g)| *y += g);
        }
        self.coupling.divergence_transpose([xs[0], xs[1], xs[2]], self.scale, yp);
        yp.par_iter_mut().zip(xs[3].par_iter()).zip(self.coupling.pressure_active.par_iter()).for_each(
            |((y, &p), &a)| {
                if !a {
                    *y = p;
                }
            },
        );
    }

    pub fn work(&self) -> PreconditionerWork {
        PreconditionerWork {
            velocity: [0, 1, 2].map(|c| self.velocity_mg[c].work()),
            pressure: self.pressure_mg.work(),
            gradient: vec![0.0; self.offsets[3]],
            schur: vec![0.0; self.coupling.grid.len()],
        }
    }

    /// `z = P⁻¹ r` with the block upper-triangular preconditioner.
    pub fn precondition(&self, r: &[f64], z: &mut [f64], work: &mut PreconditionerWork) {
        let rs = self.split(r);
        let h = self.coupling.grid.spacing;
        let [zu, zv, zw, zp] = self.split_mut(z);
        // z_p = −S̃⁻¹ r_p = −(σ/h · L⁻¹ r_p + μ_e/h³ r_p) / s² with L = GᵀG / h⁴.
        let s2 = self.scale * self.scale;
        if self.resistivity > 0.0 {
            self.pressure_mg.precondition(rs[3], &mut work.schur, &mut work.pressure);
        } else {
            work.schur.iter_mut().for_each(|v| *v = 0.0);
        }
        let (sigma_part, mu_part) = (self.resistivity / h / s2, self.effective_viscosity / h.powi(3) / s2);
        zp.par_iter_mut()
            .zip(rs[3].par_iter())
            .zip(work.schur.par_iter())
            .zip(self.coupling.pressure_active.par_iter())
            .for_each(|(((z, &r), &l), &a)| *z = if a { -(sigma_part * l + mu_part * r) } else { r });
        // z_u = A⁻¹ (r_u − s G z_p), one V-cycle per component.
        let mut offset = 0;
        for (c, zc) in [zu, zv, zw].into_iter().enumerate() {
            let len = zc.len();
            let t = &mut work.gradient[offset..offset + len];
            self.coupling.gradient(c, zp, self.scale, t);
            t.par_iter_mut().zip(rs[c].par_iter()).for_each(|(t, &r)| *t = r - *t);
            self.velocity_mg[c].precondition(t, zc, &mut work.velocity[c]);
            offset += len;
        }
    }

    /// Bytes held by the operators, hierarchies and one preconditioner work set.
    pub fn memory_bytes(&self) -> usize {
        let op_bytes = |op: &FaceCoupledOperator| {
            op.conductance.iter().chain(op.flux.iter()).map(|v| 8 * v.len()).sum::<usize>()
                + 9 * op.sink.len()
        };
        let blocks: usize = self.blocks.iter().map(|b| op_bytes(&b.operator) + 9 * b.rhs.len()).sum();
        let hierarchies: usize =
            self.velocity_mg.iter().map(|m| m.memory_bytes() + m.work_bytes()).sum::<usize>()
                + self.pressure_mg.memory_bytes()
                + self.pressure_mg.work_bytes();
        blocks
            + hierarchies
            + op_bytes(&self.pressure_operator)
            + 8 * (self.offsets[3] + self.coupling.grid.len())
    }
}

/// `GᵀG / h⁴`: unit conductance across every velocity unknown between two pressure unknowns, a unit sink for an
/// outlet unknown (p = 0 beyond it); one cell pinned when nothing fixes the pressure level.
fn pressure_poisson(coupling: &PressureCoupling) -> FaceCoupledOperator {
    let grid = &coupling.grid;
    let periodic = coupling.components[0].periodic;
    let mut conductance = [0, 1, 2].map(|a| vec![0.0; grid.face_count(mesh::Axis::ALL[a])]);
    let mut sink = vec![0.0; grid.len()];
    for (c, (comp, active)) in coupling.components.iter().zip(&coupling.velocity_active).enumerate() {
        for (f, &act) in active.iter().enumerate() {
            if !act {
                continue;
            }
            let ijk = comp.ijk(f);
            match comp.adjacent_cells(grid, ijk) {
                (Some(_), Some(_)) => conductance[c][comp.face(grid, ijk)] = 1.0,
                (Some(cell), None) | (None, Some(cell)) => sink[cell] += 1.0,
                (None, None) => {}
            }
        }
    }
    if sink.iter().all(|&s| s == 0.0) {
        if let Some(first) = coupling.pressure_active.iter().position(|&a| a) {
            sink[first] = 1.0;
        }
    }
    FaceCoupledOperator {
        shape: grid.shape,
        periodic,
        conductance,
        flux: [0, 1, 2].map(|a| vec![0.0; grid.face_count(mesh::Axis::ALL[a])]),
        sink,
        active: coupling.pressure_active.clone(),
    }
}
