//! The momentum block of one velocity component: `−μ_e ∇²u_c + (μ/K) u_c` times the face control volume.
//!
//! Row of unknown P (face control volume h³, half of it on an outlet face):
//!
//! ```text
//! (μ/K) V_P u_P + Σ_links μ_e A/h (u_P − u_N) + Σ_cut links μ_e A/(θ h) (u_P − u_b) + (pressure term) = f_P
//! ```
//!
//! A link to a neighbour N whose segment crosses a sphere surface at the fraction θ of the spacing is cut there
//! and ends on the no-slip value u_b = 0 (the symmetric ghost-value treatment of Dirichlet data on an irregular
//! boundary, Gibou, Fedkiw, Cheng & Kang 2002, J. Comput. Phys. 176, 205–227, from memory: second-order values,
//! first-order gradients). Chamber faces enter the same way (θ = 1/2 for tangential nodes, θ = 1 next to a
//! prescribed normal velocity). Every term is a flux between two control volumes or into a boundary, so the sum
//! of the rows over a region is its momentum balance; the cut-link fluxes are the viscous force on each sphere.
//! θ is clamped below at `min_wall_fraction` so that no row becomes arbitrarily stiff.

use super::chamber_velocity::{ChamberVelocity, TangentialCondition};
use super::sphere_index::{SegmentHit, SphereIndex};
use super::staggered_grid::ComponentGrid;
use crate::linalg::FaceCoupledOperator;
use mesh::Grid;
use rayon::prelude::*;

/// The Brinkman coefficients (SI).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MomentumCoefficients {
    /// μ_e (Pa s).
    pub effective_viscosity: f64,
    /// μ/K (Pa s / m²); zero for Stokes flow.
    pub resistivity: f64,
    /// Body force per unit volume along +x driving a periodic chamber (Pa/m), else 0.
    pub driving_gradient: f64,
    /// Lower bound of the cut fraction θ.
    pub min_wall_fraction: f64,
}

/// A cut link from unknown `unknown` to the surface of cell `owner`: its viscous force on the cell is
/// `coefficient · u_unknown` along the component's axis (N).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct WallLink {
    pub unknown: usize,
    pub coefficient: f64,
    pub owner: usize,
}

/// The assembled block of one component.
#[derive(Clone, Debug)]
pub struct MomentumBlock {
    pub component: ComponentGrid,
    /// Conductances between unknowns, sink on the diagonal, `active` = the row is an unknown.
    pub operator: FaceCoupledOperator,
    /// Right-hand side: boundary values through their links and the driving force (N).
    pub rhs: Vec<f64>,
    /// Prescribed normal velocities on chamber faces: (unknown index, value m/s).
    pub known: Vec<(usize, f64)>,
    /// Whether an unknown's control volume is the half volume of an outlet face.
    pub half_volume: Vec<bool>,
    pub wall_links: Vec<WallLink>,
}

/// Assembles the block of component `axis`.
pub fn assemble_momentum(
    grid: &Grid,
    axis: usize,
    chamber: &ChamberVelocity,
    spheres: &SphereIndex,
    coefficients: &MomentumCoefficients,
) -> MomentumBlock {
    let periodic = chamber.boundaries.periodic_axes();
    let component = ComponentGrid::new(grid, axis, periodic);
    let h = grid.spacing;
    let mu = coefficients.effective_viscosity;
    let n = component.len();
    let mut active = vec![false; n];
    let mut half_volume = vec![false; n];
    let mut known_value: Vec<Option<f64>> = vec![None; n];
    let mut known = Vec::new();
    // Unknowns farther than a spacing from every sphere: in no sphere, and none of their links is cut. Only the
    // others are tested against the spheres.
    let near = spheres.near_points(component.position(grid, [0; 3]), h, component.shape, h);
    // Which unknowns are rows, and the prescribed normal values on chamber faces (the sphere tests in parallel).
    let solid_at: Vec<bool> = (0..n)
        .into_par_iter()
        .map(|p| near[p] && spheres.owner_at(component.position(grid, component.ijk(p))).is_some())
        .collect();
    let mut ijk = [0; 3];
    for (p, act) in active.iter_mut().enumerate() {
        if p > 0 {
            component.advance(&mut ijk);
        }
        let x = component.position(grid, ijk);
        let solid = solid_at[p];
        match component.chamber_side(ijk) {
            Some(side) => match chamber.normal_value(axis, side, x) {
                Some(value) => {
                    let value = if solid { 0.0 } else { value };
                    known_value[p] = Some(value);
                    known.push((p, value));
                }
                None => {
                    *act = !solid;
                    half_volume[p] = true;
                }
            },
            None => *act = !solid,
        }
    }
    let volume = |p: usize| if half_volume[p] { 0.5 * h.powi(3) } else { h.powi(3) };
    let mut sink: Vec<f64> =
        (0..n).map(|p| if active[p] { coefficients.resistivity * volume(p) } else { 0.0 }).collect();
    let mut rhs: Vec<f64> = (0..n)
        .map(|p| if active[p] && axis == 0 { coefficients.driving_gradient * volume(p) } else { 0.0 })
        .collect();
    let mut wall_links = Vec::new();
    let face_count = |a: usize| {
        let mut s = component.shape;
        s[a] += 1;
        s[0] * s[1] * s[2]
    };
    let mut conductance = [face_count(0), face_count(1), face_count(2)].map(|c| vec![0.0; c]);

    let mut cut = |p: usize, theta: f64, value: f64, area: f64, owner: Option<usize>, sink: &mut [f64]| {
        let g = mu * area / (theta.max(coefficients.min_wall_fraction) * h);
        sink[p] += g;
        rhs[p] += g * value;
        if let Some(owner) = owner {
            wall_links.push(WallLink { unknown: p, coefficient: g, owner });
        }
    };

    let upper_of = |ijk: [usize; 3], a: usize| {
        if ijk[a] + 1 < component.shape[a] {
            let mut q = ijk;
            q[a] += 1;
            Some((q, ijk[a] + 1))
        } else if periodic[a] {
            let mut q = ijk;
            q[a] = 0;
            Some((q, 0))
        } else {
            None
        }
    };
    let no_hit = SegmentHit { from_start: None, from_end: None };
    for a in 0..3 {
        let mut s = component.shape;
        s[a] += 1;
        let face_index = |ijk: [usize; 3]| ijk[0] + s[0] * (ijk[1] + s[1] * ijk[2]);
        // The links along a that meet a sphere, in increasing p (searched in parallel, used in order below).
        let hits: Vec<(usize, SegmentHit)> = (0..n)
            .into_par_iter()
            .filter_map(|p| {
                if !near[p] {
                    return None;
                }
                let ijk = component.ijk(p);
                let (q_ijk, _) = upper_of(ijk, a)?;
                let q = component.index(q_ijk);
                if !(active[p] || active[q]) || q == p {
                    return None;
                }
                let x = component.position(grid, ijk);
                let mut xq = x;
                xq[a] += h;
                let hit = spheres.segment_hit(x, xq);
                (hit != no_hit).then_some((p, hit))
            })
            .collect();
        let hit_of = |p: usize| match hits.binary_search_by_key(&p, |&(hp, _)| hp) {
            Ok(i) => hits[i].1,
            Err(_) => no_hit,
        };
        // The link from row p to its upper neighbour along a: (q, its face, whether it couples the two rows).
        let link = |p: usize, ijk: [usize; 3]| {
            let (q_ijk, face_along) = upper_of(ijk, a)?;
            let q = component.index(q_ijk);
            let coupled = active[p] && active[q] && q != p && (!near[p] || hit_of(p).from_start.is_none());
            let mut f = ijk;
            f[a] = face_along;
            Some((q, face_index(f), coupled))
        };
        // Control-volume face area of links along a: halved across an outlet face's half volume.
        let area_of = |p: usize| if a != axis && half_volume[p] { 0.5 * h * h } else { h * h };
        // Coupled links, face by face in parallel: face f is the upper link of row f − ê_a (of the last row
        // across a periodic axis for f_a = 0), of no row on a non-periodic chamber face.
        conductance[a].par_chunks_mut(s[0]).enumerate().for_each(|(line, faces)| {
            let (j, k) = (line % s[1], line / s[1]);
            for (i, g) in faces.iter_mut().enumerate() {
                let mut ijk = [i, j, k];
                if ijk[a] >= 1 && ijk[a] < component.shape[a] {
                    ijk[a] -= 1;
                } else if ijk[a] == 0 && periodic[a] {
                    ijk[a] = component.shape[a] - 1;
                } else {
                    continue;
                }
                let p = component.index(ijk);
                if let Some((_, _, true)) = link(p, ijk) {
                    *g = mu * area_of(p) / h;
                }
            }
        });
        // Rows with a cut or open upper link or a tangential chamber face, in increasing p: their boundary terms
        // are added in this order (as a sequential pass over every row would), so sums are the same bits.
        let [sx, sy, _] = component.shape;
        let tangential_side = a != axis && !periodic[a];
        let events: Vec<usize> = (0..n / sx.max(1))
            .into_par_iter()
            .flat_map_iter(|line| {
                let (j, k) = (line % sy, line / sy);
                let (link, active, shape) = (&link, &active, component.shape);
                (0..sx).filter_map(move |i| {
                    let p = line * sx + i;
                    let ijk = [i, j, k];
                    let open = link(p, ijk)
                        .is_some_and(|(q, _, coupled)| !coupled && q != p && (active[p] || active[q]));
                    let tangential = tangential_side && active[p] && (ijk[a] == 0 || ijk[a] + 1 == shape[a]);
                    (open || tangential).then_some(p)
                })
            })
            .collect();
        for &p in &events {
            let ijk = component.ijk(p);
            let x = component.position(grid, ijk);
            let area = area_of(p);
            if let Some((q, _, coupled)) = link(p, ijk) {
                let mut xq = x;
                xq[a] += h;
                let hit = hit_of(p);
                let ends = [(p, q, hit.from_start), (q, p, hit.from_end)];
                let cut_ends = if coupled || q == p { &ends[..0] } else { &ends[..] };
                for &(row, other, from) in cut_ends {
                    if !active[row] {
                        continue;
                    }
                    match (from, known_value[other]) {
                        (Some((theta, owner)), _) => cut(row, theta, 0.0, area, Some(owner), &mut sink),
                        (None, Some(value)) => cut(row, 1.0, value, area, None, &mut sink),
                        // The neighbour lies in a sphere that the segment only grazes at its end.
                        (None, None) => {
                            let end = if row == p { xq } else { x };
                            cut(row, 1.0, 0.0, area, spheres.owner_at(end), &mut sink)
                        }
                    }
                }
            }
            // Tangential chamber faces (the normal direction's chamber faces are unknowns or known values).
            if tangential_side && active[p] {
                for side in 0..2 {
                    let at_face = if side == 0 { ijk[a] == 0 } else { ijk[a] == component.shape[a] - 1 };
                    if !at_face {
                        continue;
                    }
                    let mut xb = x;
                    xb[a] += if side == 0 { -0.5 * h } else { 0.5 * h };
                    if let TangentialCondition::Value(value) = chamber.tangential(a, side, axis, xb) {
                        let hit = if near[p] { spheres.segment_hit(x, xb).from_start } else { None };
                        match hit {
                            Some((t, owner)) => cut(p, 0.5 * t, 0.0, area, Some(owner), &mut sink),
                            None => cut(p, 0.5, value, area, None, &mut sink),
                        }
                    }
                }
            }
        }
    }
    let operator = FaceCoupledOperator {
        shape: component.shape,
        periodic,
        conductance,
        flux: [face_count(0), face_count(1), face_count(2)].map(|c| vec![0.0; c]),
        sink,
        active,
    };
    MomentumBlock { component, operator, rhs, known, half_volume, wall_links }
}
