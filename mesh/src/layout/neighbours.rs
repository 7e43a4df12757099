//! Uniform bucket grid over the chamber for neighbour search among cell centres (common practice: "cell
//! lists"). With buckets at least as wide as the interaction distance, every partner of a point lies in the
//! 3×3×3 block of buckets around it; periodic axes wrap.

use super::chamber::ChamberBox;

/// Most buckets ever allocated; beyond this the buckets are made wider (search stays correct, just slower).
const MAX_BUCKETS: usize = 1 << 21;

#[derive(Clone, Debug)]
pub struct BucketGrid {
    chamber: ChamberBox,
    counts: [usize; 3],
    size: [f64; 3],
    buckets: Vec<Vec<usize>>,
}

impl BucketGrid {
    /// Buckets of edge at least `min_size` (m) over `chamber`.
    pub fn new(chamber: &ChamberBox, min_size: f64) -> Self {
        let extent = chamber.extent();
        let mut edge = min_size.max(f64::MIN_POSITIVE);
        let mut counts;
        loop {
            counts = extent.map(|l| ((l / edge).floor() as usize).clamp(1, 1 << 20));
            if counts.iter().product::<usize>() <= MAX_BUCKETS {
                break;
            }
            edge *= 1.26;
        }
        let size = [0, 1, 2].map(|a| extent[a] / counts[a] as f64);
        BucketGrid { chamber: *chamber, counts, size, buckets: vec![Vec::new(); counts.iter().product()] }
    }

    /// Smallest bucket edge (m).
    pub fn min_bucket_size(&self) -> f64 {
        self.size.iter().copied().fold(f64::INFINITY, f64::min)
    }

    pub fn counts(&self) -> [usize; 3] {
        self.counts
    }

    /// Bucket holding point `p` (points outside the chamber go to the nearest edge bucket, or wrap on
    /// periodic axes).
    pub fn bucket_of(&self, p: [f64; 3]) -> [usize; 3] {
        [0, 1, 2].map(|a| {
            let t = ((p[a] - self.chamber.lower[a]) / self.size[a]).floor();
            let n = self.counts[a] as i64;
            let t = if t.is_finite() { t as i64 } else { 0 };
            if self.chamber.periodic[a] {
                t.rem_euclid(n) as usize
            } else {
                t.clamp(0, n - 1) as usize
            }
        })
    }

    fn flat(&self, b: [usize; 3]) -> usize {
        b[0] + self.counts[0] * (b[1] + self.counts[1] * b[2])
    }

    /// Empty every bucket, keeping their storage (for rebuilding after the points moved).
    pub fn clear(&mut self) {
        for bucket in &mut self.buckets {
            bucket.clear();
        }
    }

    pub fn insert(&mut self, id: usize, p: [f64; 3]) {
        let b = self.flat(self.bucket_of(p));
        self.buckets[b].push(id);
    }

    /// Move `id` from the bucket of `from` to the bucket of `to`.
    pub fn relocate(&mut self, id: usize, from: [f64; 3], to: [f64; 3]) {
        let (old, new) = (self.flat(self.bucket_of(from)), self.flat(self.bucket_of(to)));
        if old != new {
            let bucket = &mut self.buckets[old];
            if let Some(k) = bucket.iter().position(|&m| m == id) {
                bucket.swap_remove(k);
            }
            self.buckets[new].push(id);
        }
    }

    /// Visit the ids in all buckets at Chebyshev offset exactly `ring` from bucket `b` (wrapping on periodic
    /// axes, where a bucket may be visited more than once once the ring exceeds half the bucket count).
    pub fn visit_ring(&self, b: [usize; 3], ring: usize, mut f: impl FnMut(usize)) {
        let r = ring as i64;
        for dz in -r..=r {
            for dy in -r..=r {
                for dx in -r..=r {
                    if dx.abs().max(dy.abs()).max(dz.abs()) != r {
                        continue;
                    }
                    let mut target = [0usize; 3];
                    let mut inside = true;
                    for (a, d) in [dx, dy, dz].into_iter().enumerate() {
                        let n = self.counts[a] as i64;
                        let t = b[a] as i64 + d;
                        if self.chamber.periodic[a] {
                            target[a] = t.rem_euclid(n) as usize;
                        } else if (0..n).contains(&t) {
                            target[a] = t as usize;
                        } else {
                            inside = false;
                        }
                    }
                    if inside {
                        for &id in &self.buckets[self.flat(target)] {
                            f(id);
                        }
                    }
                }
            }
        }
    }

    /// Visit every id in the 3×3×3 block of buckets around the bucket of `p`.
    pub fn visit_near(&self, p: [f64; 3], mut f: impl FnMut(usize)) {
        let b = self.bucket_of(p);
        self.visit_ring(b, 0, &mut f);
        self.visit_ring(b, 1, &mut f);
    }
}
