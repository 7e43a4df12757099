//! Simple (rectangular) lattice of equal cells.

use super::chamber::ChamberBox;
use super::error::LayoutError;
use super::validate::check_cell_values;
use super::{micrometres, Cell, Layout};

/// Cells at `lower + (i + ½)·spacing` along each axis, for i = 0, 1, ... while the sphere fits: on a
/// non-periodic axis while `(i + ½)·s + a ≤ L`, on a periodic axis while `(i + ½)·s < L` (the wrap-around
/// neighbour distance is then checked by [`Layout::validate`], so choose L a multiple of s there). Ids run
/// x fastest, then y, then z. A spacing closer than a diameter, or one that leaves no room for a single cell,
/// is an error.
pub fn lattice(
    spacing: [f64; 3],
    chamber: &ChamberBox,
    radius: f64,
    secretion_rate: f64,
) -> Result<Layout, LayoutError> {
    if !chamber.is_well_formed() {
        return Err(LayoutError::Invalid { what: "the chamber is empty or not finite".into() });
    }
    check_cell_values(0, chamber.lower, radius, secretion_rate)?;
    let extent = chamber.extent();
    let mut counts = [0usize; 3];
    for a in 0..3 {
        let s = spacing[a];
        if !(s.is_finite() && s > 0.0) {
            return Err(LayoutError::Invalid { what: format!("lattice spacing {s} m must be positive") });
        }
        let fits = |i: usize| {
            let offset = (i as f64 + 0.5) * s;
            if chamber.periodic[a] {
                offset < extent[a]
            } else {
                offset + radius <= extent[a]
            }
        };
        while fits(counts[a]) {
            counts[a] += 1;
        }
        if counts[a] == 0 {
            return Err(LayoutError::Invalid {
                what: format!(
                    "lattice spacing {} along {} leaves no room for a cell of radius {} in a chamber {} long",
                    micrometres(s),
                    ["x", "y", "z"][a],
                    micrometres(radius),
                    micrometres(extent[a])
                ),
            });
        }
    }
    // Refused before anything is allocated: a spacing closer than a diameter (along an axis with two or more
    // cells) overlaps neighbours, and such a request can ask for any number of cells.
    for a in 0..3 {
        if counts[a] > 1 && spacing[a] < 2.0 * radius {
            let second = counts[..a].iter().fold(1usize, |n, &c| n.saturating_mul(c));
            return Err(LayoutError::Overlap { first: 0, second, gap: spacing[a] - 2.0 * radius });
        }
    }
    let mut cells = Vec::with_capacity(counts.iter().product());
    for k in 0..counts[2] {
        for j in 0..counts[1] {
            for i in 0..counts[0] {
                let index = [i, j, k];
                let centre = [0, 1, 2].map(|a| chamber.lower[a] + (index[a] as f64 + 0.5) * spacing[a]);
                cells.push(Cell { id: cells.len(), centre, radius, secretion_rate });
            }
        }
    }
    let layout = Layout { cells };
    layout.validate(chamber)?;
    Ok(layout)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spacing_closer_than_a_diameter_is_refused_before_allocating() {
        // 1 nm spacing in a 1 mm box would ask for 10^18 cells; the diameter check refuses it first.
        let c = ChamberBox { lower: [0.0; 3], upper: [1e-3; 3], periodic: [false; 3] };
        let err = lattice([1e-9; 3], &c, 5e-6, 1.0).unwrap_err();
        assert!(matches!(err, LayoutError::Overlap { first: 0, second: 1, .. }), "{err}");
    }

    #[test]
    fn counts_positions_and_order() {
        let chamber = ChamberBox { lower: [0.0; 3], upper: [100e-6, 60e-6, 40e-6], periodic: [false; 3] };
        let layout = lattice([40e-6, 20e-6, 20e-6], &chamber, 8e-6, 1.0).unwrap();
        // x: centres 20, 60 (100 would need 108 ≤ 100: no); y: 10? 0.5·20 = 10 ≥ 8, centres 10, 30, 50; z: 10, 30.
        assert_eq!(layout.cells.len(), 2 * 3 * 2);
        let close = |p: [f64; 3], q: [f64; 3]| (0..3).all(|a| (p[a] - q[a]).abs() < 1e-18);
        assert!(close(layout.cells[1].centre, [60e-6, 10e-6, 10e-6]));
        assert!(close(layout.cells[2].centre, [20e-6, 30e-6, 10e-6]));
        assert!(layout.cells.iter().enumerate().all(|(n, c)| c.id == n));
    }

    #[test]
    fn too_dense_or_too_sparse_lattices_are_errors() {
        let chamber = ChamberBox { lower: [0.0; 3], upper: [100e-6; 3], periodic: [true; 3] };
        // Spacing 15 um with radius 8 um: neighbours overlap.
        assert!(matches!(
            lattice([15e-6; 3], &chamber, 8e-6, 1.0),
            Err(LayoutError::Overlap { first: 0, second: 1, .. })
        ));
        let closed = ChamberBox { periodic: [false; 3], ..chamber };
        assert!(matches!(lattice([300e-6; 3], &closed, 8e-6, 1.0), Err(LayoutError::Invalid { .. })));
        // Periodic with a spacing dividing the box: a full lattice of 5³ with wrap distance 20 um.
        let layout = lattice([20e-6; 3], &chamber, 8e-6, 1.0).unwrap();
        assert_eq!(layout.cells.len(), 125);
    }
}
