//! Dense random packing of equal spheres by the force-biased algorithm of Jodrey & Tory (1985, Phys. Rev. A
//! 32, 2347) [memory], in the form of growth with collision relaxation: all centres are drawn at once,
//! uniformly in the region. Each iteration computes the *inner* diameter (the smallest centre distance) and
//! pushes every pair closer than the *outer* diameter apart along its line of centres, each partner by half
//! the overlap, all from the same positions (a Jacobi step); a push that leaves the region is undone by
//! putting the centre back into it (walls, margins, a cluster's ellipsoid), periodic axes wrap. The outer
//! diameter starts large (a nominal volume fraction of 0.9) and shrinks each iteration by a fixed part of its
//! distance to the inner one, which grows as the packing evens out; it stops as soon as the inner diameter
//! reaches the target. Each pair is pushed 1.5 times its overlap (over-relaxation, common practice for such
//! Jacobi steps): the neighbours push part of it back, and the plain step took 2.6 times as many iterations
//! (bench/RECORDS.md); when the inner diameter stops growing the step falls back to the plain one.
//!
//! Random sequential addition cannot pass its jamming limit (about 0.38); this reaches 0.55–0.60 (random
//! close packing, the limit of every such method, is about 0.64). Deterministic: one thread, a fixed order,
//! the layout's own seeded generator.

use super::neighbours::BucketGrid;
use super::region::CentreRegion;
use numkit::Xoshiro256StarStar;

/// Stopping rules of [`grow_and_relax`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PackingParams {
    /// Starting outer diameter, as the volume fraction it would give (Jodrey & Tory start from 1).
    pub start_fraction: f64,
    /// Fraction of the way from the outer diameter to the inner one (the smallest centre distance) that the
    /// outer diameter shrinks per iteration (Jodrey & Tory's contraction rate).
    pub contraction: f64,
    /// Each partner of a pair closer than the outer diameter moves by `push × overlap / 2`: above 1 an
    /// over-relaxed step (the pair ends beyond the outer diameter, anticipating the neighbours' push back).
    pub push: f64,
    /// After this many iterations without a new largest inner diameter, the push falls back to 1 (the plain
    /// step, which cannot overshoot into oscillation).
    pub stall_iterations: usize,
    /// The outer diameter never shrinks below `target × (1 + floor)`, so the inner one can pass the target.
    pub floor: f64,
    /// Iterations allowed (the effort bound: the work is at most this many passes over all cells).
    pub max_iterations: usize,
}

impl Default for PackingParams {
    fn default() -> Self {
        PackingParams {
            start_fraction: 0.9,
            contraction: 0.01,
            push: 1.5,
            stall_iterations: 200,
            floor: 2e-3,
            max_iterations: 4000,
        }
    }
}

/// How the packing went.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PackingInfo {
    pub iterations: usize,
}

/// The packing stopped before the smallest centre distance reached the target.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PackingError {
    /// Largest smallest-centre-distance seen (m).
    pub reached_diameter: f64,
    pub iterations: usize,
}

/// `count` centres in `region`, no two closer than `diameter` (periodic images included), packed at volume
/// fraction `fraction` of the space they can occupy. Returns the centres in draw order.
pub(crate) fn grow_and_relax(
    count: usize,
    diameter: f64,
    fraction: f64,
    region: &CentreRegion,
    rng: &mut Xoshiro256StarStar,
    params: &PackingParams,
) -> Result<(Vec<[f64; 3]>, PackingInfo), PackingError> {
    let mut centres = Vec::with_capacity(count);
    while centres.len() < count {
        if let Some(p) = region.draw(rng) {
            centres.push(p);
        }
    }
    let floor = diameter * (1.0 + params.floor);
    let mut outer = (diameter * (params.start_fraction / fraction.max(1e-12)).cbrt()).max(floor);
    let mut buckets = BucketGrid::new(&region.chamber, outer);
    let mut shifts = vec![[0.0; 3]; count];
    let mut partners = Vec::new();
    let mut reached: f64 = 0.0;
    let (mut push, mut since_best) = (params.push, 0);
    for iteration in 0..params.max_iterations {
        if buckets.min_bucket_size() < outer {
            buckets = BucketGrid::new(&region.chamber, outer);
        }
        let inner = push_apart(&centres, outer, region, &mut buckets, &mut shifts, &mut partners, push);
        if inner > reached {
            (reached, since_best) = (inner, 0);
        } else {
            since_best += 1;
            if since_best >= params.stall_iterations {
                push = push.min(1.0);
            }
        }
        if inner >= diameter {
            return Ok((centres, PackingInfo { iterations: iteration }));
        }
        for (p, shift) in centres.iter_mut().zip(&shifts) {
            for a in 0..3 {
                p[a] += shift[a];
            }
            region.restore(p);
        }
        outer = (outer - params.contraction * (outer - inner).max(0.0)).max(floor);
    }
    Err(PackingError { reached_diameter: reached, iterations: params.max_iterations })
}

/// One Jacobi pass: the displacement of every centre from all pairs closer than `outer` (each partner by
/// `push` times half the overlap, along the line of centres), from positions as they are; returns the
/// smallest centre distance (infinite when no pair is within `outer`).
fn push_apart(
    centres: &[[f64; 3]],
    outer: f64,
    region: &CentreRegion,
    buckets: &mut BucketGrid,
    shifts: &mut [[f64; 3]],
    partners: &mut Vec<usize>,
    push: f64,
) -> f64 {
    let chamber = region.chamber;
    buckets.clear();
    for (n, p) in centres.iter().enumerate() {
        buckets.insert(n, *p);
    }
    // With three or more buckets along every axis no bucket is seen twice.
    let may_repeat = buckets.counts().iter().any(|&c| c < 3);
    shifts.iter_mut().for_each(|s| *s = [0.0; 3]);
    let outer2 = outer * outer;
    let mut inner2 = f64::INFINITY;
    for i in 0..centres.len() {
        partners.clear();
        buckets.visit_near(centres[i], |j| {
            if j > i {
                partners.push(j);
            }
        });
        // Short periodic axes can show one bucket twice; the sorted order keeps the sums independent of how
        // the buckets list their cells.
        partners.sort_unstable();
        if may_repeat {
            partners.dedup();
        }
        for &j in partners.iter() {
            let s = chamber.separation(centres[i], centres[j]);
            let r2 = s.iter().map(|v| v * v).sum::<f64>();
            inner2 = inner2.min(r2);
            if r2 >= outer2 {
                continue;
            }
            let r = r2.sqrt();
            // Coincident centres: any direction separates them; x is as good as any.
            let unit = if r > 0.0 { s.map(|v| v / r) } else { [1.0, 0.0, 0.0] };
            let step = 0.5 * push * (outer - r);
            for a in 0..3 {
                shifts[i][a] -= step * unit[a];
                shifts[j][a] += step * unit[a];
            }
        }
    }
    inner2.sqrt()
}
