//! Checks that a layout is physical in its chamber: finite positive values, no cell crossing a non-periodic
//! face, and no two cells overlapping or touching (periodic images included).

use super::chamber::ChamberBox;
use super::error::LayoutError;
use super::neighbours::BucketGrid;
use super::{micrometres, Layout};

impl Layout {
    /// Validate against `chamber`. Errors, in this order of checks: `Invalid` (non-finite or non-positive
    /// values, centre outside a periodic axis' range), `CrossesFace`, `Overlap` (the pair with the smallest
    /// first id, then the smallest second id). A cell may touch a wall; it may not touch another cell.
    pub fn validate(&self, chamber: &ChamberBox) -> Result<(), LayoutError> {
        if !chamber.is_well_formed() {
            return Err(LayoutError::Invalid {
                what: format!(
                    "chamber from {:?} to {:?} m is empty or not finite",
                    chamber.lower, chamber.upper
                ),
            });
        }
        for (n, cell) in self.cells.iter().enumerate() {
            check_cell_values(n, cell.centre, cell.radius, cell.secretion_rate)?;
        }
        let extent = chamber.extent();
        for cell in &self.cells {
            for a in 0..3 {
                let (c, r) = (cell.centre[a], cell.radius);
                if chamber.periodic[a] {
                    if c < chamber.lower[a] || c >= chamber.upper[a] {
                        return Err(LayoutError::Invalid {
                            what: format!(
                                "cell {} has its centre outside the periodic range of axis {} ({} to {})",
                                cell.id,
                                ["x", "y", "z"][a],
                                micrometres(chamber.lower[a]),
                                micrometres(chamber.upper[a])
                            ),
                        });
                    }
                } else if c - r < chamber.lower[a] {
                    return Err(LayoutError::CrossesFace { id: cell.id, face: ChamberBox::face_name(a, 0) });
                } else if c + r > chamber.upper[a] {
                    return Err(LayoutError::CrossesFace { id: cell.id, face: ChamberBox::face_name(a, 1) });
                }
            }
        }
        // A cell overlaps its own image when the period is not longer than its diameter.
        for cell in &self.cells {
            for (&periodic, &length) in chamber.periodic.iter().zip(&extent) {
                if periodic && length <= 2.0 * cell.radius {
                    return Err(LayoutError::Overlap {
                        first: cell.id,
                        second: cell.id,
                        gap: length - 2.0 * cell.radius,
                    });
                }
            }
        }
        if let Some((first, second, gap)) = first_overlap(self, chamber) {
            return Err(LayoutError::Overlap { first, second, gap });
        }
        Ok(())
    }
}

/// Per-cell value checks shared by the generators and the CSV reader.
pub(crate) fn check_cell_values(
    id: usize,
    centre: [f64; 3],
    radius: f64,
    secretion_rate: f64,
) -> Result<(), LayoutError> {
    if centre.iter().any(|c| !c.is_finite()) {
        return Err(LayoutError::Invalid { what: format!("cell {id} has a non-finite centre {centre:?} m") });
    }
    if !(radius.is_finite() && radius > 0.0) {
        return Err(LayoutError::Invalid {
            what: format!("cell {id} has radius {radius} m; it must be positive"),
        });
    }
    if !(secretion_rate.is_finite() && secretion_rate >= 0.0) {
        return Err(LayoutError::Invalid {
            what: format!("cell {id} has secretion rate {secretion_rate} /s; it must be finite and ≥ 0"),
        });
    }
    Ok(())
}

/// The overlapping (or touching) pair with the smallest ids, by index in `layout.cells`, reported by id.
fn first_overlap(layout: &Layout, chamber: &ChamberBox) -> Option<(usize, usize, f64)> {
    let cells = &layout.cells;
    let max_radius = cells.iter().map(|c| c.radius).fold(0.0, f64::max);
    if cells.len() < 2 {
        return None;
    }
    let mut buckets = BucketGrid::new(chamber, 2.0 * max_radius);
    for (n, c) in cells.iter().enumerate() {
        buckets.insert(n, c.centre);
    }
    for (n, c) in cells.iter().enumerate() {
        let mut partner: Option<(usize, f64)> = None;
        buckets.visit_near(c.centre, |m| {
            if m > n {
                let gap = chamber.distance(c.centre, cells[m].centre) - c.radius - cells[m].radius;
                if gap <= 0.0 && partner.is_none_or(|(best, _)| m < best) {
                    partner = Some((m, gap));
                }
            }
        });
        if let Some((m, gap)) = partner {
            return Some((c.id, cells[m].id, gap));
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::super::Cell;
    use super::*;

    fn cell(id: usize, centre: [f64; 3], radius: f64) -> Cell {
        Cell { id, centre, radius, secretion_rate: 1.0 }
    }

    fn chamber(periodic: [bool; 3]) -> ChamberBox {
        ChamberBox { lower: [0.0; 3], upper: [100e-6, 100e-6, 100e-6], periodic }
    }

    #[test]
    fn overlap_names_both_ids_and_the_gap() {
        let layout = Layout {
            cells: vec![
                cell(0, [20e-6, 20e-6, 20e-6], 8e-6),
                cell(1, [60e-6, 50e-6, 50e-6], 8e-6),
                cell(2, [74e-6, 50e-6, 50e-6], 8e-6),
            ],
        };
        match layout.validate(&chamber([false; 3])) {
            Err(LayoutError::Overlap { first: 1, second: 2, gap }) => assert!((gap + 2e-6).abs() < 1e-12),
            other => panic!("expected overlap of 1 and 2, got {other:?}"),
        }
        let message = layout.validate(&chamber([false; 3])).unwrap_err().to_string();
        assert!(message.contains("cells 1 and 2") && message.contains("-2.00 um"), "{message}");
    }

    #[test]
    fn touching_cells_are_rejected_and_a_small_gap_is_accepted() {
        // Dyadic numbers, so the centre distance is exactly the sum of radii.
        let chamber = ChamberBox { lower: [0.0; 3], upper: [4.0; 3], periodic: [false; 3] };
        let touching = Layout { cells: vec![cell(0, [1.0, 2.0, 2.0], 0.5), cell(1, [2.0, 2.0, 2.0], 0.5)] };
        assert!(matches!(
            touching.validate(&chamber),
            Err(LayoutError::Overlap { first: 0, second: 1, gap }) if gap == 0.0
        ));
        let apart = Layout { cells: vec![cell(0, [1.0, 2.0, 2.0], 0.5), cell(1, [2.001, 2.0, 2.0], 0.5)] };
        assert!(apart.validate(&chamber).is_ok());
        // A cell touching a wall is allowed.
        let at_wall = Layout { cells: vec![cell(0, [0.5, 2.0, 2.0], 0.5)] };
        assert!(at_wall.validate(&chamber).is_ok());
    }

    #[test]
    fn overlap_across_a_periodic_face_is_found_only_when_periodic() {
        let layout =
            Layout { cells: vec![cell(0, [5e-6, 50e-6, 50e-6], 8e-6), cell(1, [95e-6, 50e-6, 50e-6], 8e-6)] };
        // Non-periodic: both cross the x faces; periodic in x: they overlap through the face (distance 10 um).
        assert!(matches!(
            layout.validate(&chamber([false; 3])),
            Err(LayoutError::CrossesFace { id: 0, face: "x_min" })
        ));
        match layout.validate(&chamber([true, false, false])) {
            Err(LayoutError::Overlap { first: 0, second: 1, gap }) => assert!((gap + 6e-6).abs() < 1e-12),
            other => panic!("expected periodic overlap, got {other:?}"),
        }
    }

    #[test]
    fn crossing_each_face_is_named() {
        let chamber = chamber([false; 3]);
        let cases = [
            ([50e-6, 5e-6, 50e-6], "y_min"),
            ([50e-6, 50e-6, 95e-6], "z_max"),
            ([95e-6, 50e-6, 50e-6], "x_max"),
        ];
        for (centre, face) in cases {
            let layout = Layout { cells: vec![cell(7, centre, 8e-6)] };
            match layout.validate(&chamber) {
                Err(LayoutError::CrossesFace { id: 7, face: f }) => assert_eq!(f, face),
                other => panic!("expected crossing of {face}, got {other:?}"),
            }
        }
        let message = Layout { cells: vec![cell(7, [50e-6, 5e-6, 50e-6], 8e-6)] }
            .validate(&chamber)
            .unwrap_err()
            .to_string();
        assert_eq!(message, "cell 7 crosses the chamber face y_min");
    }

    #[test]
    fn invalid_values_are_rejected() {
        let bad_radius = Layout { cells: vec![cell(0, [50e-6; 3], -1e-6)] };
        assert!(matches!(bad_radius.validate(&chamber([false; 3])), Err(LayoutError::Invalid { .. })));
        let nan = Layout { cells: vec![cell(0, [f64::NAN, 50e-6, 50e-6], 5e-6)] };
        assert!(matches!(nan.validate(&chamber([false; 3])), Err(LayoutError::Invalid { .. })));
        let self_image = Layout { cells: vec![cell(3, [50e-6; 3], 8e-6)] };
        let small =
            ChamberBox { lower: [0.0; 3], upper: [15e-6, 100e-6, 100e-6], periodic: [true, false, false] };
        assert!(matches!(self_image.validate(&small), Err(LayoutError::Invalid { .. })));
        let small = ChamberBox {
            lower: [40e-6, 0.0, 0.0],
            upper: [55e-6, 100e-6, 100e-6],
            periodic: [true, false, false],
        };
        assert!(matches!(self_image.validate(&small), Err(LayoutError::Overlap { first: 3, second: 3, .. })));
    }
}
