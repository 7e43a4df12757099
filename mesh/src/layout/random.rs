//! Random sequential addition (RSA) of equal cells: candidate centres are drawn uniformly and kept when they
//! clear every cell already placed by the minimum gap (common practice; the jamming limit of RSA for equal
//! spheres is a volume fraction of about 0.38, Torquato 2002 [memory], so dense targets will give up).

use super::chamber::ChamberBox;
use super::error::LayoutError;
use super::neighbours::BucketGrid;
use super::validate::check_cell_values;
use super::{Cell, Layout};
use numkit::Xoshiro256StarStar;

/// How many cells a random layout should hold.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum RandomTarget {
    /// Exactly this many cells.
    Count(usize),
    /// Cell volume / chamber volume; the count is `round(φ · V_box / (4/3 π a³))`.
    VolumeFraction(f64),
}

/// Parameters of a random layout of equal cells (SI: m, molecules/s).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RandomLayout {
    pub target: RandomTarget,
    pub radius: f64,
    pub secretion_rate: f64,
    /// Smallest surface-to-surface gap between two cells (m), ≥ 0. Walls need no gap.
    pub min_gap: f64,
    pub seed: u64,
}

/// Candidate draws allowed per requested cell before giving up (the attempt budget is
/// `ATTEMPTS_PER_CELL × requested` draws in total).
pub const ATTEMPTS_PER_CELL: usize = 1000;

impl RandomLayout {
    /// Number of cells the target asks for in `chamber`.
    pub fn requested_count(&self, chamber: &ChamberBox) -> Result<usize, LayoutError> {
        match self.target {
            RandomTarget::Count(n) => Ok(n),
            RandomTarget::VolumeFraction(phi) => {
                if !(phi.is_finite() && (0.0..1.0).contains(&phi)) {
                    return Err(LayoutError::Invalid {
                        what: format!("volume fraction {phi} is not in [0, 1)"),
                    });
                }
                let cell_volume = 4.0 / 3.0 * std::f64::consts::PI * self.radius.powi(3);
                Ok((phi * chamber.volume() / cell_volume).round() as usize)
            }
        }
    }
}

/// Place cells by random sequential addition. Centres are uniform in the box shrunk by one radius on
/// non-periodic axes (so every cell lies inside those faces) and in `[lower, upper)` on periodic axes (cells
/// may wrap). A candidate is accepted when its centre distance to every placed cell, periodic images
/// included, is at least `2a + min_gap`. Ids are 0, 1, ... in placement order. Reproducible from `seed`.
pub fn random_sequential_addition(spec: &RandomLayout, chamber: &ChamberBox) -> Result<Layout, LayoutError> {
    if !chamber.is_well_formed() {
        return Err(LayoutError::Invalid { what: "the chamber is empty or not finite".into() });
    }
    check_cell_values(0, chamber.lower, spec.radius, spec.secretion_rate)?;
    if !(spec.min_gap.is_finite() && spec.min_gap >= 0.0) {
        return Err(LayoutError::Invalid {
            what: format!("minimum gap {} m must be finite and ≥ 0", spec.min_gap),
        });
    }
    let requested = spec.requested_count(chamber)?;
    let extent = chamber.extent();
    let exclusion = 2.0 * spec.radius + spec.min_gap;
    let mut low = [0.0; 3];
    let mut width = [0.0; 3];
    for a in 0..3 {
        if chamber.periodic[a] {
            if extent[a] < exclusion {
                return Err(LayoutError::Invalid {
                    what: format!(
                        "the periodic {} extent {} is shorter than a cell diameter plus the minimum gap",
                        ["x", "y", "z"][a],
                        super::micrometres(extent[a])
                    ),
                });
            }
            low[a] = chamber.lower[a];
            width[a] = extent[a];
        } else {
            low[a] = chamber.lower[a] + spec.radius;
            width[a] = extent[a] - 2.0 * spec.radius;
            if width[a] < 0.0 {
                return Err(LayoutError::NotPackable { placed: 0, requested });
            }
        }
    }

    let mut rng = Xoshiro256StarStar::seed_from_u64(spec.seed);
    let mut buckets = BucketGrid::new(chamber, exclusion);
    let mut cells: Vec<Cell> = Vec::with_capacity(requested);
    let exclusion2 = exclusion * exclusion;
    let budget = ATTEMPTS_PER_CELL.saturating_mul(requested);
    let mut attempts = 0usize;
    while cells.len() < requested {
        if attempts >= budget {
            return Err(LayoutError::NotPackable { placed: cells.len(), requested });
        }
        attempts += 1;
        let centre = [0, 1, 2].map(|a| {
            let x = low[a] + width[a] * rng.next_f64();
            // Rounding can land exactly on `upper`; keep periodic centres in [lower, upper).
            if chamber.periodic[a] && x >= chamber.upper[a] {
                chamber.lower[a]
            } else {
                x
            }
        });
        let mut clear = true;
        buckets.visit_near(centre, |m| {
            if clear {
                let d = chamber.separation(centre, cells[m].centre);
                if d.iter().map(|v| v * v).sum::<f64>() < exclusion2 {
                    clear = false;
                }
            }
        });
        if clear {
            let id = cells.len();
            buckets.insert(id, centre);
            cells.push(Cell { id, centre, radius: spec.radius, secretion_rate: spec.secretion_rate });
        }
    }
    let layout = Layout { cells };
    layout.validate(chamber)?;
    Ok(layout)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn chamber(periodic: [bool; 3]) -> ChamberBox {
        ChamberBox { lower: [0.0; 3], upper: [400e-6, 200e-6, 100e-6], periodic }
    }

    fn spec(target: RandomTarget, seed: u64) -> RandomLayout {
        RandomLayout { target, radius: 8e-6, secretion_rate: 0.5, min_gap: 2e-6, seed }
    }

    #[test]
    fn reproducible_with_a_seed_and_different_with_another() {
        let c = chamber([false; 3]);
        let a = random_sequential_addition(&spec(RandomTarget::Count(300), 7), &c).unwrap();
        let b = random_sequential_addition(&spec(RandomTarget::Count(300), 7), &c).unwrap();
        let other = random_sequential_addition(&spec(RandomTarget::Count(300), 8), &c).unwrap();
        assert_eq!(a, b);
        assert_eq!(a.cells.len(), 300);
        let moved = a.cells.iter().zip(&other.cells).filter(|(p, q)| p.centre != q.centre).count();
        assert_eq!(moved, 300, "a different seed must give different centres");
        assert!(a.cells.iter().enumerate().all(|(n, c)| c.id == n));
    }

    #[test]
    fn honours_gap_walls_and_periodic_images() {
        let c = chamber([true, false, true]);
        let layout = random_sequential_addition(&spec(RandomTarget::Count(250), 3), &c).unwrap();
        // Brute-force check of the gap over all pairs, with minimum-image distances.
        for (n, p) in layout.cells.iter().enumerate() {
            assert!(p.centre[1] - p.radius >= 0.0 && p.centre[1] + p.radius <= 200e-6);
            for q in &layout.cells[n + 1..] {
                assert!(c.distance(p.centre, q.centre) >= 18e-6 * (1.0 - 1e-12));
            }
        }
        // Some cell should wrap across a periodic face with this many cells.
        let wrapping =
            layout.cells.iter().filter(|p| p.centre[0] < p.radius || p.centre[0] > 400e-6 - p.radius).count();
        assert!(wrapping > 0);
    }

    #[test]
    fn volume_fraction_target_sets_the_count() {
        let c = chamber([false; 3]);
        let layout = random_sequential_addition(&spec(RandomTarget::VolumeFraction(0.05), 1), &c).unwrap();
        let expected =
            (0.05 * c.volume() / (4.0 / 3.0 * std::f64::consts::PI * 8e-6f64.powi(3))).round() as usize;
        assert_eq!(layout.cells.len(), expected);
        assert_eq!(expected, 187); // 0.05 · 8e-12 m³ / 2.1447e-15 m³ = 186.5
    }

    #[test]
    fn gives_up_with_counts_when_the_box_is_too_full() {
        let c = ChamberBox { lower: [0.0; 3], upper: [60e-6; 3], periodic: [false; 3] };
        // Centres live in a 44 um cube and need 18 um separation: the volume bound allows about 30, ask for 40.
        match random_sequential_addition(&spec(RandomTarget::Count(40), 5), &c) {
            Err(LayoutError::NotPackable { placed, requested: 40 }) => {
                assert!((8..40).contains(&placed), "{placed}")
            }
            other => panic!("expected NotPackable, got {other:?}"),
        }
    }

    #[test]
    fn thousands_of_cells_are_fast() {
        let c = ChamberBox { lower: [0.0; 3], upper: [1e-3, 1e-3, 0.4e-3], periodic: [false; 3] };
        let start = std::time::Instant::now();
        let layout = random_sequential_addition(&spec(RandomTarget::VolumeFraction(0.2), 11), &c).unwrap();
        assert!(layout.cells.len() > 18_000);
        assert!(start.elapsed().as_secs_f64() < 5.0, "{:?}", start.elapsed());
    }
}
