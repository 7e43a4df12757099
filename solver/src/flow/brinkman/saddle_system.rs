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
//! Int. J. Numer. Methods Fluids 8, 869–895, from memory), with the viscous (mass-matrix) part weighted per
//! pressure cell by the velocity rows around it:
//!
//! ```text
//! S⁻¹ ≈ σ h³ (Gᵀ G)⁻¹ + W⁻¹,   W_P = Σ_{faces f of P} h⁴ / D_f
//! ```
//!
//! with D_f the viscous diagonal of velocity row f (links and cut links, without σV). In the bulk W⁻¹ is the
//! plain `μ_e/h³`; next to a sphere the cut links stiffen D_f and W⁻¹ grows with them. The unweighted `μ_e/h³`
//! lets the iterations grow under refinement (bench/RECORDS.md), because it overestimates S⁻¹
//! by up to the cut-link stiffness ratio in the pressure cells around each sphere (common practice: a
//! diagonally scaled mass matrix; the weighting is ours). `(GᵀG)⁻¹` is one V-cycle of the pressure Poisson
//! operator (Neumann at walls and spheres, Dirichlet at outlets). Robust from the Stokes limit (σ = 0) to the
//! Darcy limit (μ_e/σh² → 0).

use super::assemble_momentum::MomentumBlock;
use super::momentum_rows::{MomentumRows, PressureStencil};
use super::pressure_gradient::PressureCoupling;
use super::velocity_multigrid::{VelocityMultigrid, VelocityWork};
use crate::linalg::multigrid::{Multigrid, MultigridWork};
use crate::linalg::real::Real;
use crate::linalg::{
    store_scaled_residual, AdvectionScheme, FaceCoupledOperator, MultigridParams, SparseVector,
};
use rayon::prelude::*;

/// The assembled system with its preconditioner hierarchies. The face arrays of the momentum blocks are
/// released once the hierarchies and the compact rows are built (only `active`, `rhs`, `known`,
/// `half_volume` and `wall_links` stay).
pub struct SaddleSystem {
    pub blocks: [MomentumBlock; 3],
    pub coupling: PressureCoupling,
    /// Pressure scale s (Pa per unit of p̃).
    pub scale: f64,
    pub resistivity: f64,
    pub effective_viscosity: f64,
    offsets: [usize; 4],
    rows: [MomentumRows; 3],
    velocity_mg: [VelocityMultigrid; 3],
    pressure_mg: Multigrid,
    /// Viscous part of the Schur approximation per pressure cell: `1 / (s² Σ_f h⁴ / D_f)` (f32, as the rest of
    /// the preconditioner).
    viscous_inverse: Vec<f32>,
}

/// Work vectors of one preconditioner application on vectors of type T (f64 or f32).
pub struct PreconditionerWork<T = f64> {
    velocity: [VelocityWork; 3],
    pressure: MultigridWork,
    /// `r_u − s G z_p` of one component at a time.
    gradient: Vec<T>,
    schur: Vec<T>,
}

impl SaddleSystem {
    /// Builds the hierarchies and the compact rows; None if a block's conductances are not the two values
    /// [`MomentumRows`] encodes (an assembly change not mirrored there).
    pub fn new(
        mut blocks: [MomentumBlock; 3],
        coupling: PressureCoupling,
        effective_viscosity: f64,
        resistivity: f64,
        params: &MultigridParams,
        finest_from_rows: bool,
    ) -> Option<Self> {
        let h = coupling.grid.spacing;
        let scale = 6.0 * effective_viscosity / h + resistivity * h;
        let sizes = [0, 1, 2].map(|c| blocks[c].operator.active.len());
        let sizes = [sizes[0], sizes[1], sizes[2], coupling.grid.len()];
        let offsets = [0, sizes[0], sizes[0] + sizes[1], sizes[0] + sizes[1] + sizes[2]];
        let viscous_inverse = viscous_schur_inverse(&blocks, &coupling, resistivity, scale);
        // The velocity hierarchies first, each releasing its block's face arrays, then the pressure one: the
        // face arrays of all four never coexist.
        let built = blocks
            .par_iter_mut()
            .map(|block| {
                let rows = MomentumRows::new(block, effective_viscosity, resistivity, h)?;
                let mg = VelocityMultigrid::new(&block.operator, &rows, params, finest_from_rows);
                let op = &mut block.operator;
                op.conductance = Default::default();
                op.flux = Default::default();
                op.sink = Vec::new();
                Some((rows, mg))
            })
            .collect::<Option<Vec<_>>>();
        let pressure_mg = {
            let pressure_operator = pressure_poisson(&coupling);
            Multigrid::new(&pressure_operator, AdvectionScheme::Central, params.clone())
        };
        let (rows, velocity_mg): (Vec<MomentumRows>, Vec<VelocityMultigrid>) = built?.into_iter().unzip();
        let rows: [MomentumRows; 3] = rows.try_into().ok()?;
        let velocity_mg: [VelocityMultigrid; 3] = velocity_mg.try_into().ok()?;
        Some(SaddleSystem {
            blocks,
            coupling,
            scale,
            resistivity,
            effective_viscosity,
            offsets,
            rows,
            velocity_mg,
            pressure_mg,
            viscous_inverse,
        })
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

    fn split<'a, T>(&self, x: &'a [T]) -> [&'a [T]; 4] {
        let (u, rest) = x.split_at(self.offsets[1]);
        let (v, rest) = rest.split_at(self.offsets[2] - self.offsets[1]);
        let (w, p) = rest.split_at(self.offsets[3] - self.offsets[2]);
        [u, v, w, p]
    }

    fn split_mut<'a, T>(&self, x: &'a mut [T]) -> [&'a mut [T]; 4] {
        let (u, rest) = x.split_at_mut(self.offsets[1]);
        let (v, rest) = rest.split_at_mut(self.offsets[2] - self.offsets[1]);
        let (w, p) = rest.split_at_mut(self.offsets[3] - self.offsets[2]);
        [u, v, w, p]
    }

    fn pressure_stencil(&self) -> PressureStencil {
        PressureStencil {
            grid_shape: self.coupling.grid.shape,
            coefficient: self.scale * self.coupling.grid.face_area(),
        }
    }

    /// `y = K x`; inactive rows are the identity. f64 vectors for the exact residual, f32 for the inner solve of
    /// the refinement (sums in f64 either way).
    pub fn apply<T: Real>(&self, x: &[T], y: &mut [T]) {
        let xs = self.split(x);
        let [yu, yv, yw, yp] = self.split_mut(y);
        let stencil = self.pressure_stencil();
        for (c, yc) in [yu, yv, yw].into_iter().enumerate() {
            self.rows[c].apply(c, Some(xs[c]), xs[3], stencil, yc);
        }
        self.apply_continuity(xs, yp);
    }

    /// The continuity rows of `y = K x`: `s Gᵀ u` on pressure unknowns, the identity elsewhere.
    fn apply_continuity<T: Real>(&self, xs: [&[T]; 4], yp: &mut [T]) {
        self.coupling.divergence_transpose([xs[0], xs[1], xs[2]], self.scale, yp);
        yp.par_iter_mut().zip(xs[3].par_iter()).zip(self.coupling.pressure_active.par_iter()).for_each(
            |((y, &p), &a)| {
                if !a {
                    *y = p;
                }
            },
        );
    }

    /// Largest |net outflow| / grid-cell volume left in the continuity rows at `x` (in the velocity unit of `x`
    /// per metre): `|(s Gᵀ u − b_p)_P| / (s h³)` over the pressure unknowns.
    pub fn continuity_peak(&self, x: &[f64], rhs: &SparseVector) -> f64 {
        let xs = self.split(x);
        let mut r = vec![0.0; self.coupling.grid.len()];
        self.coupling.divergence_transpose([xs[0], xs[1], xs[2]], self.scale, &mut r);
        for &(i, b) in rhs.entries.iter().filter(|(i, _)| *i >= self.offsets[3]) {
            r[i - self.offsets[3]] -= b;
        }
        self.pressure_rows_peak(&r)
    }

    /// [`Self::continuity_peak`] from a residual `r = b − K x` of the coupled system.
    pub fn residual_continuity_peak(&self, r: &[f64]) -> f64 {
        self.pressure_rows_peak(&r[self.offsets[3]..])
    }

    fn pressure_rows_peak(&self, rows: &[f64]) -> f64 {
        let volume = self.scale * self.coupling.grid.cell_volume();
        rows.par_iter()
            .zip(self.coupling.pressure_active.par_iter())
            .map(|(&r, &a)| if a { r.abs() / volume } else { 0.0 })
            .reduce(|| 0.0, f64::max)
    }

    pub fn work<T: Real>(&self) -> PreconditionerWork<T> {
        PreconditionerWork {
            velocity: [0, 1, 2].map(|c| self.velocity_mg[c].work(&self.rows[c])),
            pressure: self.pressure_mg.work(),
            gradient: vec![T::ZERO; self.rows.iter().map(|r| r.len()).max().unwrap_or(0)],
            schur: vec![T::ZERO; self.coupling.grid.len()],
        }
    }

    /// `r = b − K x` in f64, one block at a time through an f64 scratch of one block's length: stores `scale · r`
    /// in `out` (f32) and returns `‖r‖₂` and [`Self::continuity_peak`] of `x`.
    pub fn scaled_residual(&self, x: &[f64], rhs: &SparseVector, scale: f64, out: &mut [f32]) -> (f64, f64) {
        let xs = self.split(x);
        let outs = self.split_mut(out);
        let largest = self.rows.iter().map(|r| r.len()).max().unwrap_or(0).max(self.coupling.grid.len());
        let mut scratch = vec![0.0; largest];
        let stencil = self.pressure_stencil();
        let mut squares = 0.0;
        let mut continuity = 0.0;
        for (block, out) in outs.into_iter().enumerate() {
            let r = &mut scratch[..out.len()];
            match block {
                3 => self.apply_continuity(xs, r),
                c => self.rows[c].apply(c, Some(xs[c]), xs[3], stencil, r),
            }
            r.par_iter_mut().for_each(|v| *v = -*v);
            let start = self.offsets[block];
            for &(i, b) in rhs.entries.iter().filter(|(i, _)| (start..start + out.len()).contains(i)) {
                r[i - start] += b;
            }
            if block == 3 {
                continuity = self.pressure_rows_peak(r);
            }
            squares += store_scaled_residual(r, scale, out);
        }
        (squares.sqrt(), continuity)
    }

    /// `z = P⁻¹ r` with the block upper-triangular preconditioner (vectors of f64 or f32).
    pub fn precondition<T: Real>(&self, r: &[T], z: &mut [T], work: &mut PreconditionerWork<T>) {
        let rs = self.split(r);
        let h = self.coupling.grid.spacing;
        let [zu, zv, zw, zp] = self.split_mut(z);
        // z_p = −S̃⁻¹ r_p = −(σ/h · L⁻¹ r_p / s² + W⁻¹ r_p) with L = GᵀG / h⁴ and W the viscous diagonal.
        let s2 = self.scale * self.scale;
        if self.resistivity > 0.0 {
            self.pressure_mg.precondition(rs[3], &mut work.schur, &mut work.pressure);
        } else {
            work.schur.iter_mut().for_each(|v| *v = T::ZERO);
        }
        let sigma_part = self.resistivity / h / s2;
        zp.par_iter_mut()
            .zip(rs[3].par_iter())
            .zip(work.schur.par_iter())
            .zip(self.coupling.pressure_active.par_iter())
            .zip(self.viscous_inverse.par_iter())
            .for_each(|((((z, &r), &l), &a), &w)| {
                *z = if a { T::from_f64(-(sigma_part * l.to_f64() + w as f64 * r.to_f64())) } else { r }
            });
        // z_u = A⁻¹ (r_u − s G z_p), one V-cycle per component.
        let stencil = self.pressure_stencil();
        for (c, zc) in [zu, zv, zw].into_iter().enumerate() {
            let t = &mut work.gradient[..zc.len()];
            t.copy_from_slice(rs[c]);
            self.rows[c].apply(c, None, zp, stencil, t);
            self.velocity_mg[c].precondition(&self.rows[c], t, zc, &mut work.velocity[c]);
        }
    }

    /// Bytes held by the compact rows, masks, hierarchies and one preconditioner work set (f32 vectors).
    pub fn memory_bytes(&self) -> usize {
        let rows: usize = self.rows.iter().map(|r| r.memory_bytes()).sum();
        let blocks: usize = self
            .blocks
            .iter()
            .map(|b| {
                b.operator.active.len() * 2 + 8 * b.rhs.len() + 16 * (b.known.len() + b.wall_links.len())
            })
            .sum();
        let hierarchies: usize = self
            .velocity_mg
            .iter()
            .zip(&self.rows)
            .map(|(m, r)| m.memory_bytes() + m.work_bytes(r.len()))
            .sum::<usize>()
            + self.pressure_mg.memory_bytes()
            + self.pressure_mg.work_bytes();
        let coupling = self.coupling.velocity_active.iter().map(|v| v.len()).sum::<usize>()
            + self.coupling.pressure_active.len();
        let work = 4 * (self.rows.iter().map(|r| r.len()).max().unwrap_or(0) + self.coupling.grid.len());
        rows + blocks + hierarchies + coupling + work + 4 * self.viscous_inverse.len()
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

/// Diagonal of each momentum block without its resistive part `σ V`: the viscous links and cut links of a row.
fn viscous_diagonal(block: &MomentumBlock, resistivity: f64, h: f64) -> Vec<f64> {
    let op = &block.operator;
    let shape = op.shape;
    (0..op.sink.len())
        .into_par_iter()
        .map(|p| {
            if !op.active[p] {
                return 0.0;
            }
            let ijk = [p % shape[0], (p / shape[0]) % shape[1], p / (shape[0] * shape[1])];
            let volume = if block.half_volume[p] { 0.5 * h.powi(3) } else { h.powi(3) };
            let mut d = op.sink[p] - resistivity * volume;
            for a in 0..3 {
                let mut s = shape;
                s[a] += 1;
                let face = |f: [usize; 3]| f[0] + s[0] * (f[1] + s[1] * f[2]);
                let mut lo = ijk;
                let mut hi = ijk;
                hi[a] += 1;
                if hi[a] == shape[a] && op.periodic[a] {
                    hi[a] = 0;
                }
                if !(op.periodic[a] && shape[a] == 1) {
                    d += op.conductance[a][face(hi)];
                    lo[a] = ijk[a];
                    d += op.conductance[a][face(lo)];
                }
            }
            d.max(0.0)
        })
        .collect()
}

/// The viscous part of the Schur approximation per pressure cell, `1 / (s² Σ_f h⁴ / D_f)` over the velocity
/// unknowns f on its faces (D_f their viscous diagonals): `μ_e/(s² h³)` in the bulk, larger where cut links
/// stiffen the velocity rows around a cell.
fn viscous_schur_inverse(
    blocks: &[MomentumBlock; 3],
    coupling: &PressureCoupling,
    resistivity: f64,
    scale: f64,
) -> Vec<f32> {
    let grid = &coupling.grid;
    let h = grid.spacing;
    let diagonals: Vec<Vec<f64>> = blocks.iter().map(|b| viscous_diagonal(b, resistivity, h)).collect();
    (0..grid.len())
        .into_par_iter()
        .map(|cell| {
            if !coupling.pressure_active[cell] {
                return 0.0;
            }
            let ijk = grid.ijk(cell);
            let mut sum = 0.0;
            for ((comp, active), diagonal) in
                coupling.components.iter().zip(&coupling.velocity_active).zip(&diagonals)
            {
                let (lo, hi) = comp.cell_faces(ijk);
                for f in [lo, hi] {
                    if active[f] && diagonal[f] > 0.0 {
                        sum += h.powi(4) / diagonal[f];
                    }
                }
            }
            if sum > 0.0 {
                (1.0 / (scale * scale * sum)) as f32
            } else {
                0.0
            }
        })
        .collect()
}
