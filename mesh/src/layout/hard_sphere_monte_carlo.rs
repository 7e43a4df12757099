//! Hard-sphere Monte Carlo (Metropolis et al. 1953, J. Chem. Phys. 21, 1087 [memory]): each sweep tries one
//! displacement per cell, in id order, drawn uniformly from a cube of half-edge `step`, and keeps it when the
//! cell stays inside its region and clears every other cell by the exclusion diameter. For hard spheres every
//! allowed configuration is equally likely, so the chain samples the equilibrium hard-sphere fluid at the
//! layout's density: its pair distribution is the one of liquid-state theory (Percus–Yevick, Carnahan–Starling)
//! rather than the one random sequential addition leaves (RSA is not an equilibrium sampler; its contact value
//! lies below the equilibrium one).
//!
//! The step is tuned during the first half of the sweeps towards an acceptance of about 0.4 (common
//! practice) and then held fixed. Deterministic: one thread, id order, a generator seeded from the layout's
//! seed.

use super::chamber::ChamberBox;
use super::error::LayoutError;
use super::neighbours::BucketGrid;
use super::random::RandomLayout;
use super::region::{CentreRegion, PlacementRegion};
use super::Layout;
use numkit::Xoshiro256StarStar;

/// Acceptance the step size is tuned towards (common practice: 0.3–0.5 for hard spheres).
const TARGET_ACCEPTANCE: f64 = 0.4;

/// Added to the layout's seed so the moves draw from a stream of their own.
const STREAM_OFFSET: u64 = 0x6d63_6d63_6d63_6d63;

/// How the Monte Carlo relaxation went.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MonteCarloInfo {
    pub sweeps: usize,
    /// Accepted over tried moves in the sweeps after tuning (all sweeps when there was a single one).
    pub acceptance: f64,
    /// Half-edge of the displacement cube after tuning (m).
    pub step: f64,
}

/// Move the equal cells of `layout` (placed by `spec` in `region` of `chamber`) by `sweeps` hard-sphere
/// Monte Carlo sweeps. Cells keep their ids, the minimum gap, the walls, margins or cluster they were placed
/// in; the result is checked by [`Layout::validate`].
pub fn relax_hard_spheres(
    layout: &mut Layout,
    spec: &RandomLayout,
    chamber: &ChamberBox,
    region: &PlacementRegion,
    sweeps: usize,
) -> Result<MonteCarloInfo, LayoutError> {
    let region = CentreRegion::new(region, chamber, spec.radius, spec.min_gap)?;
    let exclusion = 2.0 * spec.radius + spec.min_gap;
    let mut centres: Vec<[f64; 3]> = layout.cells.iter().map(|c| c.centre).collect();
    let info = sweep_moves(&mut centres, exclusion, &region, spec.seed, sweeps);
    for (cell, centre) in layout.cells.iter_mut().zip(centres) {
        cell.centre = centre;
    }
    layout.validate(chamber)?;
    Ok(info)
}

fn sweep_moves(
    centres: &mut [[f64; 3]],
    exclusion: f64,
    region: &CentreRegion,
    seed: u64,
    sweeps: usize,
) -> MonteCarloInfo {
    let chamber = region.chamber;
    let mut rng = Xoshiro256StarStar::seed_from_u64(seed.wrapping_add(STREAM_OFFSET));
    let mut buckets = BucketGrid::new(&chamber, exclusion);
    for (n, p) in centres.iter().enumerate() {
        buckets.insert(n, *p);
    }
    let exclusion2 = exclusion * exclusion;
    // A tenth of a diameter: near the tuned value at moderate fractions.
    let mut step = 0.1 * exclusion;
    let tuning = sweeps / 2;
    let (mut tried, mut accepted) = (0usize, 0usize);
    for sweep in 0..sweeps {
        let mut accepted_now = 0usize;
        for n in 0..centres.len() {
            let old = centres[n];
            let mut new = old.map(|x| x + step * (2.0 * rng.next_f64() - 1.0));
            if !region.admits(&mut new) {
                continue;
            }
            let mut clear = true;
            buckets.visit_near(new, |m| {
                if clear && m != n {
                    let s = chamber.separation(new, centres[m]);
                    clear = s.iter().map(|v| v * v).sum::<f64>() >= exclusion2;
                }
            });
            if clear {
                buckets.relocate(n, old, new);
                centres[n] = new;
                accepted_now += 1;
            }
        }
        if sweep < tuning {
            let acceptance = accepted_now as f64 / centres.len().max(1) as f64;
            step = (step * (acceptance / TARGET_ACCEPTANCE).clamp(0.5, 2.0)).min(0.5 * exclusion);
        } else {
            tried += centres.len();
            accepted += accepted_now;
        }
        if sweeps == 1 {
            tried = centres.len();
            accepted = accepted_now;
        }
    }
    let acceptance = if tried == 0 { 0.0 } else { accepted as f64 / tried as f64 };
    MonteCarloInfo { sweeps, acceptance, step }
}

#[cfg(test)]
mod tests {
    use super::super::random::{random_layout, RandomTarget};
    use super::*;

    #[test]
    fn moves_keep_gap_walls_and_cluster_and_are_seeded() {
        let c =
            ChamberBox { lower: [0.0; 3], upper: [120e-6, 100e-6, 100e-6], periodic: [false, true, false] };
        let spec = RandomLayout {
            target: RandomTarget::VolumeFraction(0.3),
            radius: 5e-6,
            secretion_rate: 1.0,
            min_gap: 0.5e-6,
            seed: 4,
        };
        let margins = PlacementRegion::Chamber { margins: [[10e-6, 6e-6], [0.0; 2], [0.0; 2]] };
        let placed = random_layout(&spec, &c, &margins).unwrap().layout;
        let mut moved = placed.clone();
        let info = relax_hard_spheres(&mut moved, &spec, &c, &margins, 20).unwrap();
        assert!(info.acceptance > 0.2 && info.acceptance < 0.7, "{info:?}");
        let changed = placed.cells.iter().zip(&moved.cells).filter(|(p, q)| p.centre != q.centre).count();
        assert!(changed > placed.cells.len() * 9 / 10, "{changed}");
        assert!(moved.close_pairs(&c, 0.5e-6 * (1.0 - 1e-9)).count == 0);
        for cell in &moved.cells {
            assert!(cell.centre[0] - 5e-6 >= 10e-6 - 1e-15 && cell.centre[0] + 5e-6 <= 114e-6 + 1e-15);
        }
        let mut again = placed.clone();
        relax_hard_spheres(&mut again, &spec, &c, &margins, 20).unwrap();
        assert_eq!(again, moved);

        let cluster = PlacementRegion::Ellipsoid { centre: [60e-6, 50e-6, 50e-6], semi_axes: [40e-6; 3] };
        let mut layout = random_layout(&spec, &c, &cluster).unwrap().layout;
        relax_hard_spheres(&mut layout, &spec, &c, &cluster, 10).unwrap();
        for cell in &layout.cells {
            let r2: f64 = (0..3).map(|a| ((cell.centre[a] - [60e-6, 50e-6, 50e-6][a]) / 40e-6).powi(2)).sum();
            assert!(r2 <= 1.0, "{r2}");
        }
    }
}
