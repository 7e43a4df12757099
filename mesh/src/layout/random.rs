//! Random layouts of equal cells. Random sequential addition (RSA): candidate centres are drawn uniformly and
//! kept when they clear every cell already placed by the minimum gap (common practice). RSA cannot pass its
//! jamming limit, a volume fraction of about 0.38 for equal spheres (Torquato 2002 [memory]); beyond that, or
//! when RSA runs out of attempts, the dense packing of `dense_packing.rs` takes over. A request beyond random
//! close packing is refused before anything is allocated.

use super::chamber::ChamberBox;
use super::dense_packing::{grow_and_relax, PackingParams};
use super::error::LayoutError;
use super::neighbours::BucketGrid;
use super::region::{CentreRegion, PlacementRegion};
use super::validate::check_cell_values;
use super::{Cell, Layout};
use numkit::Xoshiro256StarStar;

/// Volume fraction of random close packing of equal spheres: 0.64 (Scott & Kilgour 1969, J. Phys. D 2, 863;
/// Berryman 1983, Phys. Rev. A 27, 1053: 0.64 ± 0.02 [memory]). No random packing method goes beyond it.
pub const RANDOM_CLOSE_PACKING: f64 = 0.64;

/// Volume fraction below which RSA is tried first: the jamming limit of RSA of equal spheres, 0.38
/// (Torquato 2002, Random Heterogeneous Materials [memory]). Above it RSA cannot succeed.
pub const SEQUENTIAL_ADDITION_LIMIT: f64 = 0.38;

/// How many cells a random layout should hold.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum RandomTarget {
    /// Exactly this many cells.
    Count(usize),
    /// Cell volume / region volume (the chamber's, or a cluster's ellipsoid's); the count is
    /// `round(φ · V / (4/3 π a³))`.
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

/// Which method placed the cells of a random layout.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PackingMethod {
    SequentialAddition,
    GrowthWithRelaxation,
}

impl PackingMethod {
    pub fn describe(self) -> &'static str {
        match self {
            PackingMethod::SequentialAddition => "random sequential addition",
            PackingMethod::GrowthWithRelaxation => "dense packing by growth with collision relaxation",
        }
    }
}

/// A random layout and how it was made.
#[derive(Clone, Debug, PartialEq)]
pub struct RandomPlacement {
    pub layout: Layout,
    pub method: PackingMethod,
}

/// Candidate draws allowed per requested cell before giving up (the attempt budget is
/// `ATTEMPTS_PER_CELL × requested` draws in total).
pub const ATTEMPTS_PER_CELL: usize = 1000;

impl RandomLayout {
    /// Number of cells the target asks for in `chamber`.
    pub fn requested_count(&self, chamber: &ChamberBox) -> Result<usize, LayoutError> {
        self.count_in_volume(chamber.volume())
    }

    fn count_in_volume(&self, volume: f64) -> Result<usize, LayoutError> {
        match self.target {
            RandomTarget::Count(n) => Ok(n),
            RandomTarget::VolumeFraction(phi) => {
                if !(phi.is_finite() && (0.0..1.0).contains(&phi)) {
                    return Err(LayoutError::Invalid {
                        what: format!("volume fraction {phi} is not in [0, 1)"),
                    });
                }
                let cell_volume = 4.0 / 3.0 * std::f64::consts::PI * self.radius.powi(3);
                Ok((phi * volume / cell_volume).round() as usize)
            }
        }
    }
}

/// A checked request: the count, the prepared region, the exclusion distance `2a + min_gap` and the volume
/// fraction of the cells grown by half the gap in the space they can occupy.
struct Request {
    count: usize,
    region: CentreRegion,
    exclusion: f64,
    packed_fraction: f64,
}

/// Check the parameters and the packing bound; nothing here grows with the requested count.
fn check_request(
    spec: &RandomLayout,
    chamber: &ChamberBox,
    region: &PlacementRegion,
) -> Result<Request, LayoutError> {
    if !chamber.is_well_formed() {
        return Err(LayoutError::Invalid { what: "the chamber is empty or not finite".into() });
    }
    check_cell_values(0, chamber.lower, spec.radius, spec.secretion_rate)?;
    if !(spec.min_gap.is_finite() && spec.min_gap >= 0.0) {
        return Err(LayoutError::Invalid {
            what: format!("minimum gap {} m must be finite and ≥ 0", spec.min_gap),
        });
    }
    let centres = CentreRegion::new(region, chamber, spec.radius, spec.min_gap)?;
    let volume = match region {
        PlacementRegion::Chamber { .. } => chamber.volume(),
        PlacementRegion::Ellipsoid { semi_axes, .. } => {
            4.0 / 3.0 * std::f64::consts::PI * semi_axes.iter().product::<f64>()
        }
    };
    let count = spec.count_in_volume(volume)?;
    if centres.is_empty() {
        return Err(LayoutError::NotPackable { placed: 0, requested: count });
    }
    let reach = spec.radius + 0.5 * spec.min_gap;
    let space = centres.occupiable_volume(reach);
    let grown_cell = 4.0 / 3.0 * std::f64::consts::PI * reach.powi(3);
    let packed_fraction = count as f64 * grown_cell / space;
    if packed_fraction > RANDOM_CLOSE_PACKING {
        return Err(LayoutError::BeyondClosePacking {
            requested: count,
            fraction: packed_fraction,
            limit: RANDOM_CLOSE_PACKING,
            max_count: (RANDOM_CLOSE_PACKING * space / grown_cell).floor() as usize,
        });
    }
    Ok(Request { count, region: centres, exclusion: 2.0 * spec.radius + spec.min_gap, packed_fraction })
}

/// A random layout in `region` of `chamber`: RSA where it can succeed (the same seed gives the same cells
/// as RSA always has), else dense packing. Refused at once beyond random close packing.
pub fn random_layout(
    spec: &RandomLayout,
    chamber: &ChamberBox,
    region: &PlacementRegion,
) -> Result<RandomPlacement, LayoutError> {
    let request = check_request(spec, chamber, region)?;
    if request.packed_fraction < SEQUENTIAL_ADDITION_LIMIT {
        match sequential_addition(spec, &request) {
            Ok(layout) => return Ok(RandomPlacement { layout, method: PackingMethod::SequentialAddition }),
            Err(LayoutError::NotPackable { .. }) => {}
            Err(other) => return Err(other),
        }
    }
    let mut rng = Xoshiro256StarStar::seed_from_u64(spec.seed);
    let params = PackingParams::default();
    let (centres, _) = grow_and_relax(
        request.count,
        request.exclusion,
        request.packed_fraction,
        &request.region,
        &mut rng,
        &params,
    )
    .map_err(|e| LayoutError::PackingStalled {
        requested: request.count,
        fraction: request.packed_fraction,
        reached: request.packed_fraction * (e.reached_diameter / request.exclusion).powi(3),
    })?;
    let layout = equal_cells(spec, centres);
    layout.validate(chamber)?;
    Ok(RandomPlacement { layout, method: PackingMethod::GrowthWithRelaxation })
}

/// Place cells by random sequential addition alone, over the whole chamber. Centres are uniform in the box
/// shrunk by one radius on non-periodic axes (so every cell lies inside those faces) and in `[lower, upper)`
/// on periodic axes (cells may wrap). A candidate is accepted when its centre distance to every placed cell,
/// periodic images included, is at least `2a + min_gap`. Ids are 0, 1, ... in placement order. Reproducible
/// from `seed`.
pub fn random_sequential_addition(spec: &RandomLayout, chamber: &ChamberBox) -> Result<Layout, LayoutError> {
    let request = check_request(spec, chamber, &PlacementRegion::WHOLE_CHAMBER)?;
    sequential_addition(spec, &request)
}

fn sequential_addition(spec: &RandomLayout, request: &Request) -> Result<Layout, LayoutError> {
    let requested = request.count;
    let chamber = &request.region.chamber;
    let mut rng = Xoshiro256StarStar::seed_from_u64(spec.seed);
    let mut buckets = BucketGrid::new(chamber, request.exclusion);
    let mut centres: Vec<[f64; 3]> = Vec::with_capacity(requested);
    let exclusion2 = request.exclusion * request.exclusion;
    let budget = ATTEMPTS_PER_CELL.saturating_mul(requested);
    let mut attempts = 0usize;
    while centres.len() < requested {
        if attempts >= budget {
            return Err(LayoutError::NotPackable { placed: centres.len(), requested });
        }
        attempts += 1;
        let Some(centre) = request.region.draw(&mut rng) else { continue };
        let mut clear = true;
        buckets.visit_near(centre, |m| {
            if clear {
                let d = chamber.separation(centre, centres[m]);
                if d.iter().map(|v| v * v).sum::<f64>() < exclusion2 {
                    clear = false;
                }
            }
        });
        if clear {
            buckets.insert(centres.len(), centre);
            centres.push(centre);
        }
    }
    let layout = equal_cells(spec, centres);
    layout.validate(chamber)?;
    Ok(layout)
}

/// Cells of the spec's radius and secretion rate at `centres`, ids in order.
fn equal_cells(spec: &RandomLayout, centres: Vec<[f64; 3]>) -> Layout {
    let cells = centres
        .into_iter()
        .enumerate()
        .map(|(id, centre)| Cell { id, centre, radius: spec.radius, secretion_rate: spec.secretion_rate })
        .collect();
    Layout { cells }
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
    fn sequential_addition_keeps_its_random_stream() {
        // Cells 0 and 932 of the layout that random sequential addition gave for this request before dense
        // packing existed (400 × 200 × 100 um closed chamber, radius 8 um, gap 1 um, φ = 0.25, seed 3).
        let c = chamber([false; 3]);
        let spec = RandomLayout {
            target: RandomTarget::VolumeFraction(0.25),
            radius: 8e-6,
            secretion_rate: 0.5,
            min_gap: 1e-6,
            seed: 3,
        };
        let placed = random_layout(&spec, &c, &PlacementRegion::WHOLE_CHAMBER).unwrap();
        assert_eq!(placed.method, PackingMethod::SequentialAddition);
        assert_eq!(placed.layout.cells.len(), 933);
        assert_eq!(
            placed.layout.cells[0].centre,
            [2.732051053252306e-4, 1.2586690523932477e-4, 2.6334039355735307e-5]
        );
        assert_eq!(
            placed.layout.cells[932].centre,
            [3.225209609862881e-4, 8.820852674073699e-5, 8.936626944424283e-6]
        );
        assert_eq!(placed.layout, random_sequential_addition(&spec, &c).unwrap());
    }

    #[test]
    fn refuses_beyond_random_close_packing_before_allocating() {
        let c = ChamberBox { lower: [0.0; 3], upper: [1e-3; 3], periodic: [false; 3] };
        // 10⁹ cells of 5 um would need 20 times the chamber: refused by the bound, never allocated.
        let spec = RandomLayout {
            target: RandomTarget::Count(1_000_000_000),
            radius: 5e-6,
            secretion_rate: 1.0,
            min_gap: 0.0,
            seed: 1,
        };
        match random_layout(&spec, &c, &PlacementRegion::WHOLE_CHAMBER) {
            Err(e @ LayoutError::BeyondClosePacking { requested: 1_000_000_000, max_count, .. }) => {
                // 0.64 · (1 mm)³ / (4/3 π (5 um)³) ≈ 1.22 million.
                assert!((1_200_000..1_230_000).contains(&max_count), "{max_count}");
                assert!(e.to_string().contains("beyond random close packing (0.64)"), "{e}");
            }
            other => panic!("expected BeyondClosePacking, got {other:?}"),
        }
        // Just below the bound the request is accepted by the check (not generated here); just above, refused.
        let fraction = |n: usize| {
            let spec = RandomLayout { target: RandomTarget::Count(n), ..spec };
            check_request(&spec, &c, &PlacementRegion::WHOLE_CHAMBER).map(|r| r.packed_fraction)
        };
        assert!(fraction(1_200_000).is_ok_and(|f| f < 0.64));
        assert!(matches!(fraction(1_300_000), Err(LayoutError::BeyondClosePacking { .. })));
    }

    /// Brute-force check: every pair (minimum image) at least `2a + gap` apart, every cell inside the faces.
    fn assert_no_pair_closer(layout: &Layout, c: &ChamberBox, exclusion: f64) {
        let close = layout.close_pairs(c, exclusion - 2.0 * layout.cells[0].radius);
        assert_eq!(close.count, 0, "closest pair {:?}", close.closest);
        layout.validate(c).unwrap();
    }

    #[test]
    fn dense_packing_reaches_055_with_a_small_gap() {
        // Periodic box of 2000 cells of radius 5 um at φ = 0.55 with min_gap 0.2 um.
        let a = 5e-6;
        let side = (2000.0 * 4.0 / 3.0 * std::f64::consts::PI * a * a * a / 0.55).cbrt();
        let c = ChamberBox { lower: [0.0; 3], upper: [side; 3], periodic: [true; 3] };
        let spec = RandomLayout {
            target: RandomTarget::VolumeFraction(0.55),
            radius: a,
            secretion_rate: 1.0,
            min_gap: 0.2e-6,
            seed: 4,
        };
        let placed = random_layout(&spec, &c, &PlacementRegion::WHOLE_CHAMBER).unwrap();
        assert_eq!(placed.method, PackingMethod::GrowthWithRelaxation);
        let stats = placed.layout.statistics(&c);
        assert_eq!(stats.count, 2000);
        assert!(stats.volume_fraction >= 0.55 * (1.0 - 1e-3), "{}", stats.volume_fraction);
        assert_no_pair_closer(&placed.layout, &c, 2.0 * a + 0.2e-6);
        assert!(stats.nearest_gap_quantiles[0].1 >= 0.2e-6 * (1.0 - 1e-9));
        assert_eq!(placed, random_layout(&spec, &c, &PlacementRegion::WHOLE_CHAMBER).unwrap(), "seeded");
        // Pair distribution g(r) over [D, 2D) in bins of D/20 (D = 2a + gap): a dense random packing has its
        // highest peak at contact, r → D⁺ (Bernal & Mason 1960; Finney 1970 [memory]), far above g at 2D.
        let d = 2.0 * a + 0.2e-6;
        let mut counts = [0usize; 20];
        let cells = &placed.layout.cells;
        for (n, p) in cells.iter().enumerate() {
            for q in &cells[n + 1..] {
                let bin = ((c.distance(p.centre, q.centre) / d - 1.0) * 20.0).floor();
                if (0.0..20.0).contains(&bin) {
                    counts[bin as usize] += 1;
                }
            }
        }
        let g: Vec<f64> = (0..20)
            .map(|k| {
                let (r0, r1) = (d * (1.0 + k as f64 / 20.0), d * (1.0 + (k + 1) as f64 / 20.0));
                let shell = 4.0 / 3.0 * std::f64::consts::PI * (r1.powi(3) - r0.powi(3));
                counts[k] as f64 / (0.5 * 2000.0 * 2000.0 / c.volume() * shell)
            })
            .collect();
        let peak = (0..20).max_by(|&i, &j| g[i].total_cmp(&g[j])).unwrap();
        assert_eq!(peak, 0, "g(r) = {g:?}");
        assert!(g[0] > 3.0 * g[19], "g(r) = {g:?}");
    }

    #[test]
    fn dense_packing_respects_walls_margins_and_clusters() {
        let a = 5e-6;
        let c =
            ChamberBox { lower: [0.0; 3], upper: [120e-6, 100e-6, 100e-6], periodic: [false, true, false] };
        let spec = RandomLayout {
            target: RandomTarget::VolumeFraction(0.40),
            radius: a,
            secretion_rate: 1.0,
            min_gap: 0.2e-6,
            seed: 9,
        };
        let margins = [[12e-6, 8e-6], [0.0; 2], [0.0; 2]];
        let placed = random_layout(&spec, &c, &PlacementRegion::Chamber { margins }).unwrap();
        assert_eq!(placed.method, PackingMethod::GrowthWithRelaxation);
        assert_no_pair_closer(&placed.layout, &c, 2.0 * a + 0.2e-6);
        for cell in &placed.layout.cells {
            assert!(cell.centre[0] - a >= 12e-6 - 1e-15 && cell.centre[0] + a <= 112e-6 + 1e-15);
        }
        // A dense ellipsoidal cluster: φ = 0.5 of the ellipsoid's volume, centres inside it.
        let cluster =
            PlacementRegion::Ellipsoid { centre: [60e-6, 50e-6, 50e-6], semi_axes: [50e-6, 40e-6, 40e-6] };
        let spec = RandomLayout { target: RandomTarget::VolumeFraction(0.5), ..spec };
        let placed = random_layout(&spec, &c, &cluster).unwrap();
        let expected = (0.5 * 50.0 * 40.0 * 40.0 / 125.0f64).round() as usize;
        assert_eq!(placed.layout.cells.len(), expected);
        assert_no_pair_closer(&placed.layout, &c, 2.0 * a + 0.2e-6);
        for cell in &placed.layout.cells {
            let p = cell.centre;
            let r = ((p[0] - 60e-6) / 50e-6).powi(2)
                + ((p[1] - 50e-6) / 40e-6).powi(2)
                + ((p[2] - 50e-6) / 40e-6).powi(2);
            assert!(r <= 1.0, "{r}");
        }
    }

    #[test]
    fn thousands_of_cells_at_a_fifth_by_sequential_addition() {
        let c = ChamberBox { lower: [0.0; 3], upper: [1e-3, 1e-3, 0.4e-3], periodic: [false; 3] };
        let spec = spec(RandomTarget::VolumeFraction(0.2), 11);
        let placed = random_layout(&spec, &c, &PlacementRegion::WHOLE_CHAMBER).unwrap();
        assert!(placed.layout.cells.len() > 18_000);
        assert_eq!(placed.method, PackingMethod::SequentialAddition);
    }
}
