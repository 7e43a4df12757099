//! Summary numbers of a layout: count, volume fraction, number density, nearest-neighbour distances.

use super::chamber::ChamberBox;
use super::neighbours::BucketGrid;
use super::{Cell, Layout};
use numkit::quantile_sorted;

/// Quantiles at which nearest-neighbour centre distances are reported.
pub const NEAREST_NEIGHBOUR_QUANTILES: [f64; 5] = [0.1, 0.25, 0.5, 0.75, 0.9];

#[derive(Clone, Debug, PartialEq)]
pub struct LayoutStatistics {
    pub count: usize,
    /// Σ (4/3)πa³ / chamber volume.
    pub volume_fraction: f64,
    /// Cells per chamber volume (1/m³).
    pub number_density: f64,
    /// `(quantile, nearest-neighbour centre distance in m)` at 0.1, 0.25, 0.5, 0.75, 0.9 (periodic images
    /// included); empty with fewer than two cells.
    pub nearest_neighbour_quantiles: Vec<(f64, f64)>,
    /// `(quantile, gap in m)` of each cell's nearest surface-to-surface gap (centre distance minus both
    /// radii) at the same quantiles, plus the smallest gap as quantile 0; empty with fewer than two cells.
    pub nearest_gap_quantiles: Vec<(f64, f64)>,
}

impl Layout {
    /// Statistics of this layout in `chamber`. Quantiles interpolate linearly between order statistics
    /// (the usual "type 7" definition, common practice).
    pub fn statistics(&self, chamber: &ChamberBox) -> LayoutStatistics {
        let volume = chamber.volume();
        let count = self.cells.len();
        let cell_volume: f64 =
            self.cells.iter().map(|c| 4.0 / 3.0 * std::f64::consts::PI * c.radius.powi(3)).sum();
        let (nearest_neighbour_quantiles, nearest_gap_quantiles) = if count < 2 {
            (Vec::new(), Vec::new())
        } else {
            let (mut nearest, mut gaps): (Vec<f64>, Vec<f64>) =
                nearest_neighbours(self, chamber).into_iter().unzip();
            nearest.sort_by(f64::total_cmp);
            gaps.sort_by(f64::total_cmp);
            let at = |sorted: &[f64]| -> Vec<(f64, f64)> {
                NEAREST_NEIGHBOUR_QUANTILES.iter().map(|&q| (q, quantile_sorted(sorted, q))).collect()
            };
            let mut gap_quantiles = vec![(0.0, gaps[0])];
            gap_quantiles.extend(at(&gaps));
            (at(&nearest), gap_quantiles)
        };
        LayoutStatistics {
            count,
            volume_fraction: cell_volume / volume,
            number_density: count as f64 / volume,
            nearest_neighbour_quantiles,
            nearest_gap_quantiles,
        }
    }

    /// Pairs of cells whose surface gap is below `threshold` (m), periodic images included.
    pub fn close_pairs(&self, chamber: &ChamberBox, threshold: f64) -> ClosePairs {
        let cells = &self.cells;
        let max_radius = cells.iter().map(|c| c.radius).fold(0.0, f64::max);
        let mut close = ClosePairs { count: 0, closest: None };
        if cells.len() < 2 {
            return close;
        }
        for_each_pair_within(chamber, cells, 2.0 * max_radius + threshold.max(0.0), |n, m| {
            let (c, d) = (&cells[n], &cells[m]);
            let gap = chamber.distance(c.centre, d.centre) - c.radius - d.radius;
            if gap < threshold {
                close.count += 1;
                if close.closest.is_none_or(|(_, _, g)| gap < g) {
                    close.closest = Some((c.id, d.id, gap));
                }
            }
        });
        close
    }
}

/// Pair distribution g(r) of a layout: the number of centre pairs at distances in each bin over the number
/// an ideal gas of the same density would have there, `N(N−1)/(2V) · 4π/3 (r₁³ − r₀³)` (common practice).
/// The normalisation is exact in a fully periodic chamber; walls and margins leave fewer pairs near the faces
/// and lower g everywhere a little.
#[derive(Clone, Debug, PartialEq)]
pub struct PairDistribution {
    /// Lower edge of the first bin (m).
    pub start: f64,
    /// Bin width (m).
    pub bin_width: f64,
    /// Pairs counted per bin.
    pub pairs: Vec<usize>,
    /// g per bin.
    pub g: Vec<f64>,
}

impl PairDistribution {
    /// Middle of bin `k` (m).
    pub fn bin_centre(&self, k: usize) -> f64 {
        self.start + (k as f64 + 0.5) * self.bin_width
    }
}

impl Layout {
    /// g(r) in `bins` bins of `bin_width` (m) from `start` (m), minimum-image distances (so the last edge
    /// should stay below half of every periodic extent).
    pub fn pair_distribution(
        &self,
        chamber: &ChamberBox,
        start: f64,
        bin_width: f64,
        bins: usize,
    ) -> PairDistribution {
        let cells = &self.cells;
        let end = start + bin_width * bins as f64;
        let mut pairs = vec![0usize; bins];
        if cells.len() >= 2 && bins > 0 && bin_width > 0.0 {
            for_each_pair_within(chamber, cells, end, |n, m| {
                let bin = ((chamber.distance(cells[n].centre, cells[m].centre) - start) / bin_width).floor();
                if bin >= 0.0 && bin < bins as f64 {
                    pairs[bin as usize] += 1;
                }
            });
        }
        let n = cells.len() as f64;
        let ideal_density = 0.5 * n * (n - 1.0) / chamber.volume();
        let g = (0..bins)
            .map(|k| {
                let (r0, r1) = (start + k as f64 * bin_width, start + (k + 1) as f64 * bin_width);
                let shell = 4.0 / 3.0 * std::f64::consts::PI * (r1.powi(3) - r0.powi(3));
                pairs[k] as f64 / (ideal_density * shell)
            })
            .collect();
        PairDistribution { start, bin_width, pairs, g }
    }
}

/// Result of [`Layout::close_pairs`].
#[derive(Clone, Debug, PartialEq)]
pub struct ClosePairs {
    pub count: usize,
    /// `(id, id, gap in m)` of the closest pair.
    pub closest: Option<(usize, usize, f64)>,
}

/// For each cell, the distance to its nearest other centre and its smallest surface gap, by expanding rings
/// of buckets: after ring r no unvisited centre is closer than r bucket edges (nor any unvisited surface
/// closer than that less both radii), so the search stops once both bests are below.
fn nearest_neighbours(layout: &Layout, chamber: &ChamberBox) -> Vec<(f64, f64)> {
    let cells = &layout.cells;
    let max_radius = cells.iter().map(|c| c.radius).fold(0.0, f64::max);
    // About two cells per bucket on average.
    let bucket_edge = (2.0 * chamber.volume() / cells.len() as f64).cbrt();
    let mut buckets = BucketGrid::new(chamber, bucket_edge);
    for (n, c) in cells.iter().enumerate() {
        buckets.insert(n, c.centre);
    }
    let edge = buckets.min_bucket_size();
    let max_ring = buckets.counts().into_iter().max().unwrap_or(1);
    cells
        .iter()
        .enumerate()
        .map(|(n, c)| {
            let home = buckets.bucket_of(c.centre);
            let (mut best, mut best_gap) = (f64::INFINITY, f64::INFINITY);
            for ring in 0..=max_ring {
                buckets.visit_ring(home, ring, |m| {
                    if m != n {
                        let d = chamber.distance(c.centre, cells[m].centre);
                        best = best.min(d);
                        best_gap = best_gap.min(d - c.radius - cells[m].radius);
                    }
                });
                let reach = ring as f64 * edge;
                if best <= reach && best_gap <= reach - c.radius - max_radius {
                    break;
                }
            }
            (best, best_gap)
        })
        .collect()
}

/// Calls `visit(n, m)` once for every pair n < m of cells whose centres share or neighbour a bucket of at least
/// `reach` (m): every pair closer than `reach`, periodic images included, and some farther ones.
fn for_each_pair_within(
    chamber: &ChamberBox,
    cells: &[Cell],
    reach: f64,
    mut visit: impl FnMut(usize, usize),
) {
    let mut buckets = BucketGrid::new(chamber, reach);
    for (n, c) in cells.iter().enumerate() {
        buckets.insert(n, c.centre);
    }
    let mut partners = Vec::new();
    for (n, c) in cells.iter().enumerate() {
        partners.clear();
        buckets.visit_near(c.centre, |m| {
            if m > n {
                partners.push(m);
            }
        });
        // Short periodic axes can show one bucket twice.
        partners.sort_unstable();
        partners.dedup();
        for &m in &partners {
            visit(n, m);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::Cell;
    use super::*;
    use numkit::Xoshiro256StarStar;

    #[test]
    fn lattice_statistics_are_exact() {
        let chamber = ChamberBox { lower: [0.0; 3], upper: [100e-6; 3], periodic: [true; 3] };
        let layout = super::super::lattice([25e-6; 3], &chamber, 5e-6, 1.0).unwrap();
        let stats = layout.statistics(&chamber);
        assert_eq!(stats.count, 64);
        assert!((stats.number_density - 64.0 / 1e-12).abs() < 1e-6 * stats.number_density);
        let phi = 64.0 * 4.0 / 3.0 * std::f64::consts::PI * 125e-18 / 1e-12;
        assert!((stats.volume_fraction - phi).abs() < 1e-12);
        for (_, d) in &stats.nearest_neighbour_quantiles {
            assert!((d - 25e-6).abs() < 1e-15, "{d}");
        }
    }

    #[test]
    fn nearest_neighbours_match_brute_force() {
        let chamber = ChamberBox { lower: [0.0; 3], upper: [1.0, 0.5, 0.3], periodic: [true, false, true] };
        let mut rng = Xoshiro256StarStar::seed_from_u64(99);
        let cells: Vec<Cell> = (0..500)
            .map(|id| Cell {
                id,
                centre: [rng.next_f64(), 0.5 * rng.next_f64(), 0.3 * rng.next_f64()],
                radius: 1e-3,
                secretion_rate: 0.0,
            })
            .collect();
        let layout = Layout { cells };
        let fast = nearest_neighbours(&layout, &chamber);
        for (n, p) in layout.cells.iter().enumerate() {
            let brute = layout
                .cells
                .iter()
                .enumerate()
                .filter(|(m, _)| *m != n)
                .map(|(_, q)| chamber.distance(p.centre, q.centre))
                .fold(f64::INFINITY, f64::min);
            assert_eq!(fast[n].0, brute);
            assert!((fast[n].1 - (brute - 2e-3)).abs() < 1e-15);
        }
        assert!(Layout { cells: layout.cells[..1].to_vec() }
            .statistics(&chamber)
            .nearest_neighbour_quantiles
            .is_empty());
    }

    #[test]
    fn close_pairs_match_brute_force() {
        let chamber = ChamberBox { lower: [0.0; 3], upper: [1.0, 0.5, 0.3], periodic: [true, false, false] };
        let mut rng = Xoshiro256StarStar::seed_from_u64(5);
        let cells: Vec<Cell> = (0..400)
            .map(|id| Cell {
                id,
                centre: [rng.next_f64(), 0.5 * rng.next_f64(), 0.3 * rng.next_f64()],
                radius: 5e-3 * (1.0 + rng.next_f64()),
                secretion_rate: 0.0,
            })
            .collect();
        let layout = Layout { cells };
        let threshold = 0.01;
        let close = layout.close_pairs(&chamber, threshold);
        let mut count = 0;
        let mut smallest = f64::INFINITY;
        for (n, p) in layout.cells.iter().enumerate() {
            for q in &layout.cells[n + 1..] {
                let gap = chamber.distance(p.centre, q.centre) - p.radius - q.radius;
                if gap < threshold {
                    count += 1;
                    smallest = smallest.min(gap);
                }
            }
        }
        assert!(count > 0);
        assert_eq!(close.count, count);
        assert_eq!(close.closest.map(|c| c.2), Some(smallest));
    }
}
