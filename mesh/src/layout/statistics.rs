//! Summary numbers of a layout: count, volume fraction, number density, nearest-neighbour distances.

use super::chamber::ChamberBox;
use super::neighbours::BucketGrid;
use super::Layout;
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
}

impl Layout {
    /// Statistics of this layout in `chamber`. Quantiles interpolate linearly between order statistics
    /// (the usual "type 7" definition, common practice).
    pub fn statistics(&self, chamber: &ChamberBox) -> LayoutStatistics {
        let volume = chamber.volume();
        let count = self.cells.len();
        let cell_volume: f64 =
            self.cells.iter().map(|c| 4.0 / 3.0 * std::f64::consts::PI * c.radius.powi(3)).sum();
        let nearest_neighbour_quantiles = if count < 2 {
            Vec::new()
        } else {
            let mut nearest = nearest_neighbour_distances(self, chamber);
            nearest.sort_by(f64::total_cmp);
            NEAREST_NEIGHBOUR_QUANTILES.iter().map(|&q| (q, quantile_sorted(&nearest, q))).collect()
        };
        LayoutStatistics {
            count,
            volume_fraction: cell_volume / volume,
            number_density: count as f64 / volume,
            nearest_neighbour_quantiles,
        }
    }
}

/// Distance from each cell centre to its nearest other centre, by expanding rings of buckets: after ring r
/// no unvisited centre is closer than r bucket edges, so the search stops once the best distance is below.
fn nearest_neighbour_distances(layout: &Layout, chamber: &ChamberBox) -> Vec<f64> {
    let cells = &layout.cells;
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
            let mut best = f64::INFINITY;
            for ring in 0..=max_ring {
                buckets.visit_ring(home, ring, |m| {
                    if m != n {
                        best = best.min(chamber.distance(c.centre, cells[m].centre));
                    }
                });
                if best <= ring as f64 * edge {
                    break;
                }
            }
            best
        })
        .collect()
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
        let fast = nearest_neighbour_distances(&layout, &chamber);
        for (n, p) in layout.cells.iter().enumerate() {
            let brute = layout
                .cells
                .iter()
                .enumerate()
                .filter(|(m, _)| *m != n)
                .map(|(_, q)| chamber.distance(p.centre, q.centre))
                .fold(f64::INFINITY, f64::min);
            assert_eq!(fast[n], brute);
        }
        assert!(Layout { cells: layout.cells[..1].to_vec() }
            .statistics(&chamber)
            .nearest_neighbour_quantiles
            .is_empty());
    }
}
