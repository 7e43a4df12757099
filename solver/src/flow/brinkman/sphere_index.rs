//! Which sphere (biological cell) a point lies in, and where a grid segment first meets a sphere surface.
//!
//! The velocity unknowns live at face centres; a face whose centre lies inside a sphere carries no unknown, and a
//! link between two face centres that crosses a sphere surface is cut at the crossing, where no-slip holds. Both
//! questions are answered from the exact spheres (and their periodic images) through a bucket grid, so each query
//! costs a handful of distance tests.

use mesh::{Grid, Layout};

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

    #[test]
    fn periodic_images_are_found_across_the_wrap() {
        let grid = Grid::new([0.0; 3], 0.1, [10, 10, 10]);
        let index = SphereIndex::new(&grid, &one_sphere([0.05, 0.5, 0.5], 0.2), [true, false, false]);
        assert_eq!(index.owner_at([0.98, 0.5, 0.5]), Some(0));
        assert_eq!(index.owner_at([0.5, 0.5, 0.5]), None);
    }
}
