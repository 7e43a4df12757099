//! Where the centres of a random layout may lie: the whole chamber (optionally kept clear of some faces by a
//! margin) or an ellipsoidal cluster. Random generators draw centres from, and push them back into, a region.

use super::chamber::ChamberBox;
use super::error::LayoutError;
use super::{micrometres, Layout};
use numkit::Xoshiro256StarStar;

/// The part of the chamber a random layout fills.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum PlacementRegion {
    /// Anywhere in the chamber; on non-periodic axes every cell stays inside the faces and keeps
    /// `margins[a][side]` (m, ≥ 0) of cell-free space next to face `side` (0 = min, 1 = max) of axis `a`.
    /// Margins on periodic axes must be zero.
    Chamber { margins: [[f64; 2]; 3] },
    /// Centres inside the ellipsoid `Σ ((x_a − centre_a) / semi_axes_a)² ≤ 1` (m). Cells may stand out of it
    /// by up to their radius; with them it must lie inside the chamber.
    Ellipsoid { centre: [f64; 3], semi_axes: [f64; 3] },
}

impl PlacementRegion {
    /// The whole chamber without margins (what random sequential addition has always used).
    pub const WHOLE_CHAMBER: PlacementRegion = PlacementRegion::Chamber { margins: [[0.0; 2]; 3] };
}

/// A region prepared for cells of one radius: the centre box (`low`, `width` per axis; the full period on
/// periodic axes) and, for a cluster, the ellipsoid inside it.
#[derive(Clone, Copy, Debug)]
pub(crate) struct CentreRegion {
    pub chamber: ChamberBox,
    pub low: [f64; 3],
    pub width: [f64; 3],
    /// Centre bounds for pushed centres on non-periodic axes, nudged so that `c − a` and `c + a` stay inside
    /// the faces and margins after rounding.
    pub clamp: [[f64; 2]; 3],
    pub ellipsoid: Option<([f64; 3], [f64; 3])>,
}

impl CentreRegion {
    /// Prepare `region` for cells of radius `radius` that keep `min_gap` between them. Errors: a margin on a
    /// periodic axis, a negative or non-finite length, a cluster that does not fit in the chamber. A region
    /// too thin for a single cell gives `width < 0` on that axis (the caller refuses it).
    pub fn new(
        region: &PlacementRegion,
        chamber: &ChamberBox,
        radius: f64,
        min_gap: f64,
    ) -> Result<Self, LayoutError> {
        let extent = chamber.extent();
        let invalid = |what: String| Err(LayoutError::Invalid { what });
        match *region {
            PlacementRegion::Chamber { margins } => {
                let (mut low, mut width) = ([0.0; 3], [0.0; 3]);
                for a in 0..3 {
                    let [before, after] = margins[a];
                    if !(before.is_finite() && after.is_finite() && before >= 0.0 && after >= 0.0) {
                        return invalid(format!("the margins along {} must be finite and ≥ 0", AXES[a]));
                    }
                    if chamber.periodic[a] {
                        if before > 0.0 || after > 0.0 {
                            return invalid(format!(
                                "a margin along the periodic axis {} has no face",
                                AXES[a]
                            ));
                        }
                        if extent[a] < 2.0 * radius + min_gap {
                            return invalid(format!(
                                "the periodic {} extent {} is shorter than a cell diameter plus the minimum gap",
                                AXES[a],
                                micrometres(extent[a])
                            ));
                        }
                        low[a] = chamber.lower[a];
                        width[a] = extent[a];
                    } else {
                        // Summed in this order so that zero margins give the same numbers as before margins.
                        low[a] = chamber.lower[a] + radius + before;
                        width[a] = extent[a] - 2.0 * radius - (before + after);
                    }
                }
                let mut clamp = [[0.0; 2]; 3];
                for a in 0..3 {
                    let (first, last) = (chamber.lower[a] + margins[a][0], chamber.upper[a] - margins[a][1]);
                    clamp[a] = [first + radius, last - radius];
                    while clamp[a][0] - radius < first {
                        clamp[a][0] = clamp[a][0].next_up();
                    }
                    while clamp[a][1] + radius > last {
                        clamp[a][1] = clamp[a][1].next_down();
                    }
                }
                Ok(CentreRegion { chamber: *chamber, low, width, clamp, ellipsoid: None })
            }
            PlacementRegion::Ellipsoid { centre, semi_axes } => {
                let (mut low, mut width) = ([0.0; 3], [0.0; 3]);
                for a in 0..3 {
                    let (c, s) = (centre[a], semi_axes[a]);
                    if !(c.is_finite() && s.is_finite() && s > 0.0) {
                        return invalid(format!(
                            "the cluster's centre and semi-axis along {} must be finite, the semi-axis positive",
                            AXES[a]
                        ));
                    }
                    // Walls need no gap; across a periodic face the cell's image does.
                    let reach = s + if chamber.periodic[a] { radius + 0.5 * min_gap } else { radius };
                    if c - reach < chamber.lower[a] || c + reach > chamber.upper[a] {
                        return invalid(format!(
                            "the cluster (semi-axis {} along {} around {}) with its cells of radius {} does not fit \
                             inside the chamber from {} to {}",
                            micrometres(s),
                            AXES[a],
                            micrometres(c),
                            micrometres(radius),
                            micrometres(chamber.lower[a]),
                            micrometres(chamber.upper[a])
                        ));
                    }
                    low[a] = c - s;
                    width[a] = 2.0 * s;
                }
                let clamp = [0, 1, 2].map(|a| [low[a], low[a] + width[a]]);
                Ok(CentreRegion {
                    chamber: *chamber,
                    low,
                    width,
                    clamp,
                    ellipsoid: Some((centre, semi_axes)),
                })
            }
        }
    }

    /// Volume (m³) that spheres of radius `reach` centred in the region can occupy: the centre box grown by
    /// `reach` on non-periodic axes (the full period on periodic ones), or the ellipsoid with each semi-axis
    /// grown by `reach`.
    pub fn occupiable_volume(&self, reach: f64) -> f64 {
        match self.ellipsoid {
            Some((_, semi)) => {
                4.0 / 3.0 * std::f64::consts::PI * semi.iter().map(|s| s + reach).product::<f64>()
            }
            None => (0..3)
                .map(|a| {
                    if self.chamber.periodic[a] {
                        self.width[a]
                    } else {
                        self.width[a].max(0.0) + 2.0 * reach
                    }
                })
                .product(),
        }
    }

    /// Whether some axis leaves no room for a centre.
    pub fn is_empty(&self) -> bool {
        self.width.iter().any(|&w| w < 0.0)
    }

    /// A centre drawn from the region's box (three draws, x first), or `None` when it falls outside the
    /// ellipsoid of a cluster.
    pub fn draw(&self, rng: &mut Xoshiro256StarStar) -> Option<[f64; 3]> {
        let p = [0, 1, 2].map(|a| {
            let x = self.low[a] + self.width[a] * rng.next_f64();
            // Rounding can land exactly on `upper`; keep periodic centres in [lower, upper).
            if self.chamber.periodic[a] && x >= self.chamber.upper[a] {
                self.chamber.lower[a]
            } else {
                x
            }
        });
        self.contains(p).then_some(p)
    }

    fn contains(&self, p: [f64; 3]) -> bool {
        match self.ellipsoid {
            Some((c, s)) => (0..3).map(|a| ((p[a] - c[a]) / s[a]).powi(2)).sum::<f64>() <= 1.0,
            None => true,
        }
    }

    /// Whether a moved centre lies in the region (after wrapping it on periodic axes): inside the centre
    /// bounds on the other axes and inside a cluster's ellipsoid. A Monte Carlo move outside is refused,
    /// not pulled back, so that every allowed position stays equally likely.
    pub fn admits(&self, p: &mut [f64; 3]) -> bool {
        for (a, x) in p.iter_mut().enumerate() {
            if self.chamber.periodic[a] {
                let (lo, len) = (self.chamber.lower[a], self.width[a]);
                *x = lo + (*x - lo).rem_euclid(len);
                if *x >= self.chamber.upper[a] {
                    *x = lo;
                }
            } else if !(self.clamp[a][0]..=self.clamp[a][1]).contains(x) {
                return false;
            }
        }
        self.contains(*p)
    }

    /// Bring a moved centre back into the region: wrap periodic axes, clamp to the centre box, and pull a
    /// point outside a cluster's ellipsoid back onto it along the ray from the ellipsoid's centre.
    pub fn restore(&self, p: &mut [f64; 3]) {
        for (a, x) in p.iter_mut().enumerate() {
            if self.chamber.periodic[a] {
                let (lo, len) = (self.chamber.lower[a], self.width[a]);
                *x = lo + (*x - lo).rem_euclid(len);
                if *x >= self.chamber.upper[a] {
                    *x = lo;
                }
            } else {
                *x = x.clamp(self.clamp[a][0], self.clamp[a][1]);
            }
        }
        if let Some((c, s)) = self.ellipsoid {
            let norm = (0..3).map(|a| ((p[a] - c[a]) / s[a]).powi(2)).sum::<f64>().sqrt();
            if norm > 1.0 {
                // Slightly inside, so that rounding cannot leave it out.
                let scale = (1.0 - 1e-12) / norm;
                for a in 0..3 {
                    p[a] = c[a] + (p[a] - c[a]) * scale;
                }
            }
        }
    }
}

impl Layout {
    /// Ids of the cells whose sphere reaches into a margin: closer than `margins[a][side]` (m) to face `side`
    /// (0 = min, 1 = max) of axis `a`. Periodic axes have no faces and are not checked.
    pub fn cells_in_margins(&self, chamber: &ChamberBox, margins: &[[f64; 2]; 3]) -> Vec<usize> {
        let inside = |c: &super::Cell| {
            (0..3).any(|a| {
                !chamber.periodic[a]
                    && (c.centre[a] - c.radius < chamber.lower[a] + margins[a][0]
                        || c.centre[a] + c.radius > chamber.upper[a] - margins[a][1])
            })
        };
        self.cells.iter().filter(|c| inside(c)).map(|c| c.id).collect()
    }

    /// The layout without the cells that reach into a margin, ids renumbered in order; and how many went.
    pub fn without_cells_in_margins(self, chamber: &ChamberBox, margins: &[[f64; 2]; 3]) -> (Layout, usize) {
        let mut dropped = self.cells_in_margins(chamber, margins);
        dropped.sort_unstable();
        let mut cells: Vec<super::Cell> =
            self.cells.into_iter().filter(|c| dropped.binary_search(&c.id).is_err()).collect();
        for (n, c) in cells.iter_mut().enumerate() {
            c.id = n;
        }
        (Layout { cells }, dropped.len())
    }
}

const AXES: [&str; 3] = ["x", "y", "z"];

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn margins_shrink_the_centre_box_and_restore_clamps_into_it() {
        let chamber = ChamberBox { lower: [0.0; 3], upper: [100e-6; 3], periodic: [false, false, true] };
        let margins = [[10e-6, 20e-6], [0.0; 2], [0.0; 2]];
        let region = CentreRegion::new(&PlacementRegion::Chamber { margins }, &chamber, 5e-6, 0.0).unwrap();
        assert!((region.low[0] - 15e-6).abs() < 1e-18 && (region.width[0] - 60e-6).abs() < 1e-18);
        let mut p = [0.0, 200e-6, 130e-6];
        region.restore(&mut p);
        assert!((p[0] - 15e-6).abs() < 1e-18 && (p[1] - 95e-6).abs() < 1e-18 && (p[2] - 30e-6).abs() < 1e-12);
        let periodic_margin = [[0.0; 2], [0.0; 2], [1e-6, 0.0]];
        assert!(CentreRegion::new(
            &PlacementRegion::Chamber { margins: periodic_margin },
            &chamber,
            5e-6,
            0.0
        )
        .is_err());
    }

    #[test]
    fn cells_reaching_into_a_margin_are_found_and_dropped() {
        let chamber =
            ChamberBox { lower: [0.0; 3], upper: [100e-6, 40e-6, 40e-6], periodic: [false, true, true] };
        let layout = super::super::lattice([20e-6; 3], &chamber, 5e-6, 1.0).unwrap();
        // Centres at x = 10, 30, 50, 70, 90 um; a 6 um inlet margin catches x = 10 (reaching 5 um), an 11 um
        // outlet margin catches x = 90 (reaching 95) but not x = 70 (reaching 75 ≤ 89).
        let margins = [[6e-6, 11e-6], [0.0; 2], [0.0; 2]];
        let caught = layout.cells_in_margins(&chamber, &margins);
        assert_eq!(caught.len(), 2 * 4);
        let (kept, dropped) = layout.without_cells_in_margins(&chamber, &margins);
        assert_eq!((kept.cells.len(), dropped), (3 * 4, 8));
        assert!(kept
            .cells
            .iter()
            .enumerate()
            .all(|(n, c)| c.id == n && c.centre[0] > 20e-6 && c.centre[0] < 80e-6));
    }

    #[test]
    fn cluster_must_fit_and_restore_pulls_onto_the_ellipsoid() {
        let chamber = ChamberBox { lower: [0.0; 3], upper: [100e-6; 3], periodic: [false; 3] };
        let cluster = PlacementRegion::Ellipsoid { centre: [50e-6; 3], semi_axes: [40e-6, 20e-6, 20e-6] };
        let region = CentreRegion::new(&cluster, &chamber, 5e-6, 0.0).unwrap();
        let mut p = [100e-6, 50e-6, 50e-6];
        region.restore(&mut p);
        assert!((p[0] - 90e-6).abs() < 1e-15 && region.contains(p));
        assert!(CentreRegion::new(&cluster, &chamber, 11e-6, 0.0).is_err());
    }
}
