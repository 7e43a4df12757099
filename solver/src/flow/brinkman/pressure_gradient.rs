//! The pressure–velocity coupling of the MAC scheme: the gradient `G` and its transpose.
//!
//! Pressure force on the control volume of velocity unknown f (face area h², low cell L, high cell R):
//! `(G p)_f = h² (p_R − p_L)`, with p = 0 beyond an outlet face. Its transpose is the net volumetric inflow of a
//! grid cell, `(Gᵀ u)_P = h² (u_low face − u_high face)` over the unknown faces of P, so `Gᵀ u = −(known inflow)`
//! states `∇·u = 0` cell by cell (staircase fluxes h² u_f through the faces whose centres lie in the fluid).
//! A grid cell is a pressure unknown when at least one of its faces carries a velocity unknown.

use super::staggered_grid::ComponentGrid;
use crate::linalg::real::Real;
use mesh::Grid;
use rayon::prelude::*;

/// Gradient/divergence pair on the active unknowns.
#[derive(Clone, Debug)]
pub struct PressureCoupling {
    pub grid: Grid,
    pub components: [ComponentGrid; 3],
    /// Velocity unknowns per component (rows of the momentum blocks).
    pub velocity_active: [Vec<bool>; 3],
    /// Pressure unknowns per grid cell.
    pub pressure_active: Vec<bool>,
}

impl PressureCoupling {
    pub fn new(grid: &Grid, components: [ComponentGrid; 3], velocity_active: [Vec<bool>; 3]) -> Self {
        let pressure_active: Vec<bool> = (0..grid.len())
            .into_par_iter()
            .map(|cell| {
                let ijk = grid.ijk(cell);
                (0..3).any(|c| {
                    let (lo, hi) = components[c].cell_faces(ijk);
                    velocity_active[c][lo] || velocity_active[c][hi]
                })
            })
            .collect();
        PressureCoupling { grid: grid.clone(), components, velocity_active, pressure_active }
    }

    /// `out_c = scale · G_c p` on active unknowns (0 elsewhere).
    pub fn gradient(&self, c: usize, p: &[f64], scale: f64, out: &mut [f64]) {
        let comp = &self.components[c];
        let active = &self.velocity_active[c];
        let h2 = self.grid.face_area() * scale;
        out.par_iter_mut().enumerate().with_min_len(4096).for_each(|(f, o)| {
            if !active[f] {
                *o = 0.0;
                return;
            }
            let (low, high) = comp.adjacent_cells(&self.grid, comp.ijk(f));
            let pl = low.map_or(0.0, |l| p[l]);
            let ph = high.map_or(0.0, |r| p[r]);
            *o = h2 * (ph - pl);
        });
    }

    /// `out = scale · Gᵀ u` on active cells (0 elsewhere); `u` holds the three components. One pass over the
    /// grid lines: the low and high unknowns of cell (i, j, k) along c are unknowns (i, j, k) and (i, j, k) + ê_c
    /// of component c (wrapped along a periodic axis). Vectors of f64 or f32; the sum runs in f64.
    pub fn divergence_transpose<T: Real>(&self, u: [&[T]; 3], scale: f64, out: &mut [T]) {
        let h2 = self.grid.face_area() * scale;
        let [nx, ny, _] = self.grid.shape;
        out.par_chunks_mut(nx).enumerate().with_min_len(16).for_each(|(line, ol)| {
            let (j, k) = (line % ny, line / ny);
            let base = line * nx;
            // First unknown of this line and of the next line up along y and z, per component.
            let firsts: [(usize, usize); 3] = [0, 1, 2].map(|c| {
                let comp = &self.components[c];
                let (lo, hi) = comp.cell_faces([0, j, k]);
                (lo, hi)
            });
            for (i, o) in ol.iter_mut().enumerate() {
                if !self.pressure_active[base + i] {
                    *o = T::ZERO;
                    continue;
                }
                let mut s = 0.0;
                for c in 0..3 {
                    let active = &self.velocity_active[c];
                    let (lo0, hi0) = firsts[c];
                    let (lo, hi) = if c == 0 {
                        let hi = if i + 1 == self.components[0].shape[0] { lo0 } else { lo0 + i + 1 };
                        (lo0 + i, hi)
                    } else {
                        (lo0 + i, hi0 + i)
                    };
                    if active[lo] {
                        s += u[c][lo].to_f64();
                    }
                    if active[hi] {
                        s -= u[c][hi].to_f64();
                    }
                }
                *o = T::from_f64(h2 * s);
            }
        });
    }

    /// `(Gᵀ u)_P` contributions of prescribed (non-unknown) face velocities: `known[c]` = (unknown index, value).
    pub fn known_inflow(&self, known: [&[(usize, f64)]; 3]) -> Vec<f64> {
        let h2 = self.grid.face_area();
        let mut inflow = vec![0.0; self.grid.len()];
        for (comp, list) in self.components.iter().zip(known) {
            for &(f, value) in list {
                let (low, high) = comp.adjacent_cells(&self.grid, comp.ijk(f));
                if let Some(l) = low {
                    inflow[l] -= h2 * value;
                }
                if let Some(r) = high {
                    inflow[r] += h2 * value;
                }
            }
        }
        inflow
    }
}
