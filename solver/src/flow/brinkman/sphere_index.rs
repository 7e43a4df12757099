//! Which sphere (biological cell) a point lies in, and where a grid segment first meets a sphere surface.
//!
//! The velocity unknowns live at face centres; a face whose centre lies inside a sphere carries no unknown, and a
//! link between two face centres that crosses a sphere surface is cut at the crossing, where no-slip holds. Both
//! questions are answered from the exact spheres (and their periodic images) through a bucket grid, so each query
//! costs a handful of distance tests.

use mesh::{Grid, Layout};
use rayon::prelude::*;

/// One sphere or periodic image: owner index in the layout, centre, radius.
#[derive(Clone, Copy, Debug)]
struct Sphere {
    owner: usize,
    centre: [f64; 3],
    radius: f64,
}

/// Bucket grid over the chamber holding every sphere image that overlaps each bucket.
#[derive(Clone, Debug)]
pub struct SphereIndex {
    spheres: Vec<Sphere>,
    origin: [f64; 3],
    bucket: f64,
    shape: [usize; 3],
    /// CSR-like: `start[b]..start[b + 1]` indexes `members`.
    start: Vec<usize>,
    members: Vec<usize>,
}

/// Where a segment `x0 + t (x1 − x0)`, t in [0, 1], meets a sphere surface.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SegmentHit {
    /// First entry into a sphere seen from `x0` (fraction of the segment) and its owner.
    pub from_start: Option<(f64, usize)>,
    /// First entry seen from `x1`, as a fraction of the segment measured from `x1`, and its owner.
    pub from_end: Option<(f64, usize)>,
}

impl SphereIndex {
    /// Indexes the layout's spheres on the chamber of `grid`, with images across the periodic axes.
    pub fn new(grid: &Grid, layout: &Layout, periodic: [bool; 3]) -> Self {
        let extent = grid.extent();
        let mut spheres = Vec::new();
        for (owner, cell) in layout.cells.iter().enumerate() {
            let shifts = |a: usize| if periodic[a] { vec![0.0, -extent[a], extent[a]] } else { vec![0.0] };
            for sx in shifts(0) {
                for sy in shifts(1) {
                    for sz in shifts(2) {
                        let centre = [cell.centre[0] + sx, cell.centre[1] + sy, cell.centre[2] + sz];
                        let reaches = (0..3).all(|a| {
                            centre[a] + cell.radius > grid.origin[a] - grid.spacing
                                && centre[a] - cell.radius < grid.origin[a] + extent[a] + grid.spacing
                        });
                        if reaches {
                            spheres.push(Sphere { owner, centre, radius: cell.radius });
                        }
                    }
                }
            }
        }
        let largest = spheres.iter().map(|s| s.radius).fold(0.0, f64::max);
        let bucket = (2.0 * largest).max(4.0 * grid.spacing);
        let origin = [0, 1, 2].map(|a| grid.origin[a] - grid.spacing);
        let shape = [0, 1, 2].map(|a| ((extent[a] + 2.0 * grid.spacing) / bucket).ceil().max(1.0) as usize);
        let count = shape[0] * shape[1] * shape[2];
        let mut lists: Vec<Vec<usize>> = vec![Vec::new(); count];
        for (n, s) in spheres.iter().enumerate() {
            let lo = [0, 1, 2].map(|a| Self::clamp_bucket(origin, bucket, shape, a, s.centre[a] - s.radius));
            let hi = [0, 1, 2].map(|a| Self::clamp_bucket(origin, bucket, shape, a, s.centre[a] + s.radius));
            for k in lo[2]..=hi[2] {
                for j in lo[1]..=hi[1] {
                    for i in lo[0]..=hi[0] {
                        lists[i + shape[0] * (j + shape[1] * k)].push(n);
                    }
                }
            }
        }
        let mut start = Vec::with_capacity(count + 1);
        let mut members = Vec::new();
        for list in lists {
            start.push(members.len());
            members.extend(list);
        }
        start.push(members.len());
        SphereIndex { spheres, origin, bucket, shape, start, members }
    }

    fn clamp_bucket(origin: [f64; 3], bucket: f64, shape: [usize; 3], a: usize, x: f64) -> usize {
        let b = ((x - origin[a]) / bucket).floor();
        (b.max(0.0) as usize).min(shape[a] - 1)
    }

    fn candidates(&self, x: [f64; 3]) -> &[usize] {
        let b = [0, 1, 2].map(|a| Self::clamp_bucket(self.origin, self.bucket, self.shape, a, x[a]));
        let n = b[0] + self.shape[0] * (b[1] + self.shape[1] * b[2]);
        &self.members[self.start[n]..self.start[n + 1]]
    }

    /// Whether there are no spheres at all.
    pub fn is_empty(&self) -> bool {
        self.spheres.is_empty()
    }

    /// Which points `first + spacing · ijk` of a lattice of `shape` lie within `reach` of a sphere surface or
    /// inside a sphere (periodic images included). A point left unmarked is in no sphere and no segment from it
    /// shorter than `reach` meets a sphere surface, so its queries can be skipped; a marked point may be farther.
    /// Sphere by sphere, each lattice plane of the sphere's span in parallel (planes write disjoint rows).
    pub fn near_points(&self, first: [f64; 3], spacing: f64, shape: [usize; 3], reach: f64) -> Vec<bool> {
        let [sx, sy, sz] = shape;
        let mut near = vec![false; sx * sy * sz];
        if near.is_empty() {
            return near;
        }
        // Index range along axis a of the points within distance d of coordinate c, widened by one point on
        // each side against rounding (None if the range misses the lattice).
        let span = |a: usize, c: f64, d: f64| -> Option<(usize, usize)> {
            let lo = ((c - d - first[a]) / spacing).floor() - 1.0;
            let hi = ((c + d - first[a]) / spacing).ceil() + 1.0;
            if hi < 0.0 || lo > (shape[a] - 1) as f64 {
                return None;
            }
            Some((lo.max(0.0) as usize, (hi as usize).min(shape[a] - 1)))
        };
        for s in &self.spheres {
            let d = s.radius + reach;
            let (Some(x), Some(y), Some(z)) =
                (span(0, s.centre[0], d), span(1, s.centre[1], d), span(2, s.centre[2], d))
            else {
                continue;
            };
            // Squared distance allowed, widened by one spacing against rounding of the positions.
            let limit = (d + spacing) * (d + spacing);
            near[z.0 * sx * sy..(z.1 + 1) * sx * sy].par_chunks_mut(sx * sy).enumerate().for_each(
                |(dk, plane)| {
                    let dz = first[2] + (z.0 + dk) as f64 * spacing - s.centre[2];
                    for j in y.0..=y.1 {
                        let dy = first[1] + j as f64 * spacing - s.centre[1];
                        let row = &mut plane[j * sx..(j + 1) * sx];
                        for (i, flag) in row.iter_mut().enumerate().take(x.1 + 1).skip(x.0) {
                            let dx = first[0] + i as f64 * spacing - s.centre[0];
                            if dx * dx + dy * dy + dz * dz < limit {
                                *flag = true;
                            }
                        }
                    }
                },
            );
        }
        near
    }

    /// Owner of the sphere containing `x` (strictly inside), if any.
    pub fn owner_at(&self, x: [f64; 3]) -> Option<usize> {
        self.candidates(x).iter().map(|&n| &self.spheres[n]).find_map(|s| {
            let d2: f64 = (0..3).map(|a| (x[a] - s.centre[a]).powi(2)).sum();
            (d2 < s.radius * s.radius).then_some(s.owner)
        })
    }

    /// Crossings of the axis-parallel segment from `x0` to `x1` (length at most one bucket) with sphere surfaces.
    pub fn segment_hit(&self, x0: [f64; 3], x1: [f64; 3]) -> SegmentHit {
        let mut hit = SegmentHit { from_start: None, from_end: None };
        let d = [x1[0] - x0[0], x1[1] - x0[1], x1[2] - x0[2]];
        let dd: f64 = d.iter().map(|v| v * v).sum();
        if dd == 0.0 {
            return hit;
        }
        let mut consider = |list: &[usize]| {
            for &n in list {
                let s = &self.spheres[n];
                let m = [x0[0] - s.centre[0], x0[1] - s.centre[1], x0[2] - s.centre[2]];
                // |m + t d|² = R²  →  dd t² + 2 (m·d) t + (|m|² − R²) = 0.
                let b = m[0] * d[0] + m[1] * d[1] + m[2] * d[2];
                let c = m.iter().map(|v| v * v).sum::<f64>() - s.radius * s.radius;
                let disc = b * b - dd * c;
                if disc <= 0.0 {
                    continue;
                }
                let root = disc.sqrt();
                let t1 = (-b - root) / dd;
                let t2 = (-b + root) / dd;
                if t2 <= 0.0 || t1 >= 1.0 {
                    continue;
                }
                if t1 > 0.0 && hit.from_start.is_none_or(|(t, _)| t1 < t) {
                    hit.from_start = Some((t1, s.owner));
                }
                let back = 1.0 - t2;
                if back > 0.0 && hit.from_end.is_none_or(|(t, _)| back < t) {
                    hit.from_end = Some((back, s.owner));
                }
            }
        };
        let first = self.candidates(x0);
        consider(first);
        let second = self.candidates(x1);
        if !std::ptr::eq(first, second) {
            consider(second);
        }
        hit
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use mesh::Cell;

    fn one_sphere(centre: [f64; 3], radius: f64) -> Layout {
        Layout { cells: vec![Cell { id: 0, centre, radius, secretion_rate: 0.0 }] }
    }

    #[test]
    fn point_and_segment_queries_match_the_sphere() {
        let grid = Grid::new([0.0; 3], 0.1, [20, 20, 20]);
        let index = SphereIndex::new(&grid, &one_sphere([1.0, 1.0, 1.0], 0.3), [false; 3]);
        assert_eq!(index.owner_at([1.0, 1.0, 1.25]), Some(0));
        assert_eq!(index.owner_at([1.0, 1.0, 1.35]), None);
        // Segment along x from x = 0.6 to 0.8 at the centre line: enters at x = 0.7, i.e. t = 0.5.
        let hit = index.segment_hit([0.6, 1.0, 1.0], [0.8, 1.0, 1.0]);
        let (t, owner) = hit.from_start.expect("hit");
        assert!((t - 0.5).abs() < 1e-12 && owner == 0);
        assert!(hit.from_end.is_none());
        // A chord that passes through the sphere with both ends outside is cut from both ends.
        let hit = index.segment_hit([0.6, 1.0, 1.29], [1.4, 1.0, 1.29]);
        let half_chord = (0.3f64.powi(2) - 0.29f64.powi(2)).sqrt();
        let (t0, _) = hit.from_start.expect("entry");
        let (t1, _) = hit.from_end.expect("exit");
        assert!((t0 - (0.4 - half_chord) / 0.8).abs() < 1e-12);
        assert!((t1 - (0.4 - half_chord) / 0.8).abs() < 1e-12);
    }

    /// An unmarked lattice point is in no sphere and no axis segment of length `reach` from it is cut, with
    /// periodic images and spheres poking out of the chamber; the mark is not trivially everywhere.
    #[test]
    fn unmarked_points_have_no_sphere_nearby() {
        let grid = Grid::new([0.0; 3], 0.1, [12, 10, 9]);
        let layout = Layout {
            cells: vec![
                Cell { id: 0, centre: [0.05, 0.5, 0.45], radius: 0.17, secretion_rate: 0.0 },
                Cell { id: 1, centre: [0.8, 0.93, 0.3], radius: 0.12, secretion_rate: 0.0 },
                Cell { id: 2, centre: [0.6, 0.2, 0.88], radius: 0.21, secretion_rate: 0.0 },
            ],
        };
        let index = SphereIndex::new(&grid, &layout, [true, false, false]);
        let first = [0.0, 0.05, 0.05];
        let shape = [12, 10, 10];
        let near = index.near_points(first, 0.1, shape, 0.1);
        let marked = near.iter().filter(|&&m| m).count();
        assert!(marked > 0 && marked < near.len() / 2, "{marked} of {}", near.len());
        for (p, &m) in near.iter().enumerate() {
            let ijk = [p % 12, (p / 12) % 10, p / 120];
            let x = [0, 1, 2].map(|a| first[a] + ijk[a] as f64 * 0.1);
            let mut cut = index.owner_at(x).is_some();
            for a in 0..3 {
                for step in [-0.1, 0.1] {
                    let mut y = x;
                    y[a] += step;
                    let hit = index.segment_hit(x, y);
                    cut |= hit.from_start.is_some() || hit.from_end.is_some();
                }
            }
            assert!(m || !cut, "point {ijk:?} is next to a sphere but unmarked");
        }
    }

    #[test]
    fn periodic_images_are_found_across_the_wrap() {
        let grid = Grid::new([0.0; 3], 0.1, [10, 10, 10]);
        let index = SphereIndex::new(&grid, &one_sphere([0.05, 0.5, 0.5], 0.2), [true, false, false]);
        assert_eq!(index.owner_at([0.98, 0.5, 0.5]), Some(0));
        assert_eq!(index.owner_at([0.5, 0.5, 0.5]), None);
    }
}
