//! Build the embedded-boundary geometry of a layout of spheres on a grid.
//!
//! Work is done only in each sphere's bounding box: spheres (and their periodic images) are processed in
//! parallel, each producing a sparse *footprint* (runs of fully solid grid cells and fully blocked faces, the
//! partial solid fractions of cut cells and faces, and its facets), and the footprints are then subtracted from
//! the all-fluid state. Spheres do not overlap, so solid fractions of different spheres add:
//! `φ = 1 − Σ_s v_s`, `α = 1 − Σ_s b_s`.
//!
//! Facets: for sphere s in grid cell P the divergence theorem on the solid part `P ∩ ball_s` gives the exact
//! vector area of the curved surface patch,
//!
//! ```text
//! ∫_patch n dA = h² Σ_axes (b_low − b_high) ê_axis = h² Σ_axes (α_high − α_low) ê_axis   (sphere s alone),
//! ```
//!
//! with b the blocked fraction of a face and n out of the sphere. The facet takes `area = |∫ n dA|` and
//! `normal = ∫ n dA / area`. Because n = (x − c)/a on the sphere, the patch's own centroid lies on the ray
//! from the centre c along that normal, so the facet centroid is `c + a · normal`: the patch centroid projected
//! radially onto the sphere. It lies on the sphere within O(h²/a) of the patch.
//!
//! Periodic axes: the period is the grid extent; a sphere whose bounding box crosses a periodic face is also
//! laid down shifted by ± the period. Non-periodic faces simply clip whatever lies outside the grid.

use rayon::prelude::*;

use super::ball_box::{ball_box_volume, AxisBox};
use super::disc_rectangle::disc_rectangle_area;
use super::{BoundaryFacet, EmbeddedGeometry};
use crate::grid::{Axis, Grid};
use crate::layout::Layout;

/// Sparse contribution of one sphere image to the grid (flat indices are global).
#[derive(Debug, Default)]
struct Footprint {
    /// Runs `(first flat index, length)` of grid cells entirely inside the sphere (consecutive in i).
    solid_runs: Vec<(usize, usize)>,
    /// Solid volume fraction of cut grid cells.
    cut_cells: Vec<(usize, f64)>,
    /// Runs of faces entirely covered by the sphere, per axis (consecutive in i).
    blocked_runs: [Vec<(usize, usize)>; 3],
    /// Blocked fraction of partially covered faces, per axis.
    cut_faces: [Vec<(usize, f64)>; 3],
    facets: Vec<BoundaryFacet>,
}

/// One sphere image: owner index, centre (possibly shifted by a period), radius.
#[derive(Clone, Copy, Debug)]
struct SphereImage {
    owner: usize,
    centre: [f64; 3],
    radius: f64,
}

/// Number of sphere images processed between two merges; bounds the memory held by pending footprints.
const MERGE_BATCH: usize = 64;

impl EmbeddedGeometry {
    /// Volume fractions, apertures and facets of `layout`'s spheres on `grid`, with the given periodic axes.
    ///
    /// The layout is assumed valid (no overlaps, see `Layout::validate`); overlapping spheres would be
    /// double-counted and then clipped to [0, 1].
    pub fn build(grid: &Grid, layout: &Layout, periodic: [bool; 3]) -> EmbeddedGeometry {
        let images = sphere_images(grid, layout, periodic);
        let n = grid.len();
        let mut volume_fraction = vec![1.0; n];
        let mut aperture = Axis::ALL.map(|axis| vec![1.0; grid.face_count(axis)]);
        let mut facets = Vec::new();

        for batch in images.chunks(MERGE_BATCH) {
            let footprints: Vec<Footprint> = batch.par_iter().map(|image| footprint(grid, image)).collect();
            for fp in footprints {
                for (start, len) in fp.solid_runs {
                    volume_fraction[start..start + len].iter_mut().for_each(|v| *v -= 1.0);
                }
                for (cell, solid) in fp.cut_cells {
                    volume_fraction[cell] -= solid;
                }
                for ((open, runs), cut) in aperture.iter_mut().zip(&fp.blocked_runs).zip(&fp.cut_faces) {
                    for &(start, len) in runs {
                        open[start..start + len].iter_mut().for_each(|v| *v -= 1.0);
                    }
                    for &(face, blocked) in cut {
                        open[face] -= blocked;
                    }
                }
                facets.extend(fp.facets);
            }
        }
        volume_fraction.par_iter_mut().for_each(|v| *v = v.clamp(0.0, 1.0));
        for a in aperture.iter_mut() {
            a.par_iter_mut().for_each(|v| *v = v.clamp(0.0, 1.0));
        }
        facets.sort_by_key(|f| (f.owner, f.grid_cell));

        EmbeddedGeometry { grid: grid.clone(), periodic, volume_fraction, aperture, facets }
    }
}

/// Each sphere, plus its images shifted by ± the period along periodic axes when they reach into the grid.
fn sphere_images(grid: &Grid, layout: &Layout, periodic: [bool; 3]) -> Vec<SphereImage> {
    let extent = grid.extent();
    let mut images = Vec::new();
    for (owner, cell) in layout.cells.iter().enumerate() {
        let shifts_along = |a: usize| -> Vec<f64> {
            if periodic[a] {
                vec![0.0, -extent[a], extent[a]]
            } else {
                vec![0.0]
            }
        };
        for sx in shifts_along(0) {
            for sy in shifts_along(1) {
                for sz in shifts_along(2) {
                    let centre = [cell.centre[0] + sx, cell.centre[1] + sy, cell.centre[2] + sz];
                    let reaches_grid = (0..3).all(|a| {
                        centre[a] + cell.radius > grid.origin[a]
                            && centre[a] - cell.radius < grid.origin[a] + extent[a]
                    });
                    if reaches_grid {
                        images.push(SphereImage { owner, centre, radius: cell.radius });
                    }
                }
            }
        }
    }
    images
}

/// Range of grid-cell indices along axis `a` that the interval `[lo, hi]` touches, clipped to the grid.
fn index_range(grid: &Grid, a: usize, lo: f64, hi: f64) -> Option<(usize, usize)> {
    let h = grid.spacing;
    let n = grid.shape[a] as i64;
    let first = (((lo - grid.origin[a]) / h).floor() as i64).max(0);
    let last = (((hi - grid.origin[a]) / h).floor() as i64).min(n - 1);
    (first <= last).then_some((first as usize, last as usize))
}

/// Coordinate of grid line `index` along axis `a`.
#[inline]
fn grid_line(grid: &Grid, a: usize, index: usize) -> f64 {
    grid.origin[a] + index as f64 * grid.spacing
}

/// Blocked fraction of the face normal to `axis` with lower corner at grid lines `corner`.
fn face_blocked_fraction(grid: &Grid, axis: usize, corner: [usize; 3], image: &SphereImage) -> f64 {
    let (u, v) = ((axis + 1) % 3, (axis + 2) % 3);
    let plane = grid_line(grid, axis, corner[axis]);
    let d = plane - image.centre[axis];
    let r2 = image.radius * image.radius - d * d;
    if r2 <= 0.0 {
        return 0.0;
    }
    let lower = [grid_line(grid, u, corner[u]), grid_line(grid, v, corner[v])];
    let upper = [grid_line(grid, u, corner[u] + 1), grid_line(grid, v, corner[v] + 1)];
    let centre = [image.centre[u], image.centre[v]];
    let mut nearest = 0.0;
    let mut farthest = 0.0;
    for n in 0..2 {
        let near = (lower[n] - centre[n]).max(centre[n] - upper[n]).max(0.0);
        let far = (centre[n] - lower[n]).abs().max((upper[n] - centre[n]).abs());
        nearest += near * near;
        farthest += far * far;
    }
    if nearest >= r2 {
        0.0
    } else if farthest <= r2 {
        1.0
    } else {
        (disc_rectangle_area(r2.sqrt(), centre, lower, upper) / grid.face_area()).clamp(0.0, 1.0)
    }
}

/// The footprint of one sphere image: local dense face fractions over its bounding box, then cells.
fn footprint(grid: &Grid, image: &SphereImage) -> Footprint {
    let mut fp = Footprint::default();
    let mut range = [(0, 0); 3];
    for (a, r) in range.iter_mut().enumerate() {
        match index_range(grid, a, image.centre[a] - image.radius, image.centre[a] + image.radius) {
            Some(found) => *r = found,
            None => return fp,
        }
    }
    let lo = range.map(|r| r.0);
    let len = range.map(|r| r.1 - r.0 + 1);

    // Blocked fractions of every face of every bounding-box cell, in local dense arrays.
    let mut blocked: [Vec<f64>; 3] = [Vec::new(), Vec::new(), Vec::new()];
    for (a, local) in blocked.iter_mut().enumerate() {
        let mut shape = len;
        shape[a] += 1;
        local.reserve_exact(shape[0] * shape[1] * shape[2]);
        for k in 0..shape[2] {
            for j in 0..shape[1] {
                let mut run: Option<(usize, usize)> = None;
                for i in 0..shape[0] {
                    let corner = [lo[0] + i, lo[1] + j, lo[2] + k];
                    let b = face_blocked_fraction(grid, a, corner, image);
                    local.push(b);
                    let global = grid.face_index(Axis::ALL[a], corner[0], corner[1], corner[2]);
                    if b == 1.0 {
                        run = Some(match run {
                            Some((start, n)) => (start, n + 1),
                            None => (global, 1),
                        });
                    } else {
                        if let Some(r) = run.take() {
                            fp.blocked_runs[a].push(r);
                        }
                        if b > 0.0 {
                            fp.cut_faces[a].push((global, b));
                        }
                    }
                }
                if let Some(r) = run.take() {
                    fp.blocked_runs[a].push(r);
                }
            }
        }
    }
    let local_face = |a: usize, i: usize, j: usize, k: usize| {
        let mut shape = len;
        shape[a] += 1;
        blocked[a][i + shape[0] * (j + shape[1] * k)]
    };

    let h = grid.spacing;
    let h2 = grid.face_area();
    let h3 = grid.cell_volume();
    let a2 = image.radius * image.radius;
    for k in 0..len[2] {
        for j in 0..len[1] {
            let mut run: Option<(usize, usize)> = None;
            for i in 0..len[0] {
                let (gi, gj, gk) = (lo[0] + i, lo[1] + j, lo[2] + k);
                let lower = [grid_line(grid, 0, gi), grid_line(grid, 1, gj), grid_line(grid, 2, gk)];
                let cell_box = AxisBox { lower, upper: [lower[0] + h, lower[1] + h, lower[2] + h] };
                let global = grid.index(gi, gj, gk);
                let full = cell_box.farthest_distance_squared(image.centre) <= a2;
                if full {
                    run = Some(match run {
                        Some((start, n)) => (start, n + 1),
                        None => (global, 1),
                    });
                    continue;
                }
                if let Some(r) = run.take() {
                    fp.solid_runs.push(r);
                }
                if cell_box.nearest_distance_squared(image.centre) >= a2 {
                    continue;
                }
                let solid = (ball_box_volume(image.centre, image.radius, &cell_box) / h3).clamp(0.0, 1.0);
                if solid > 0.0 {
                    fp.cut_cells.push((global, solid));
                }
                // ∫_patch n dA = h² Σ_axes (b_low − b_high) ê_axis.
                let vector_area = [
                    h2 * (local_face(0, i, j, k) - local_face(0, i + 1, j, k)),
                    h2 * (local_face(1, i, j, k) - local_face(1, i, j + 1, k)),
                    h2 * (local_face(2, i, j, k) - local_face(2, i, j, k + 1)),
                ];
                let area = vector_area.iter().map(|v| v * v).sum::<f64>().sqrt();
                if area > 0.0 {
                    let normal = vector_area.map(|v| v / area);
                    let centroid = [0, 1, 2].map(|a| image.centre[a] + image.radius * normal[a]);
                    fp.facets.push(BoundaryFacet {
                        grid_cell: global,
                        owner: image.owner,
                        area,
                        centroid,
                        normal,
                    });
                }
            }
            if let Some(r) = run.take() {
                fp.solid_runs.push(r);
            }
        }
    }
    fp
}
