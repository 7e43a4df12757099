//! Whether the grid resolves every cell's surface well enough for cut-cell surface integrals.

use super::error::LayoutError;
use super::Layout;

/// Radius (in grid spacings) below which a cell is rejected.
pub const MIN_RADIUS_IN_SPACINGS: f64 = 2.5;
/// Radius (in grid spacings) below which a cell gets a warning.
pub const WARN_RADIUS_IN_SPACINGS: f64 = 4.0;
/// Measured constant C of the relative facet-area error `|A_h − 4πa²| / 4πa² ≈ C (h/a)²`: the largest value
/// of `error · (a/h)²` over the off-grid centres of `geometry::convergence_tests::facet_area_converges`
/// (see the numbers there), rounded up.
pub const FACET_AREA_ERROR_CONSTANT: f64 = 0.09;

/// A cell resolved by fewer than [`WARN_RADIUS_IN_SPACINGS`] grid spacings.
#[derive(Clone, Debug, PartialEq)]
pub struct CellResolutionWarning {
    pub id: usize,
    pub radius_in_spacings: f64,
    /// Expected relative error of the cell's total surface area, `C (h/a)²`.
    pub expected_surface_error: f64,
}

impl Layout {
    /// Check the cells against grid spacing `spacing` (m): `TooCoarse` for the first cell with radius below
    /// 2.5 spacings, otherwise a warning for each cell below 4 spacings.
    pub fn check_resolution(&self, spacing: f64) -> Result<Vec<CellResolutionWarning>, LayoutError> {
        if !(spacing.is_finite() && spacing > 0.0) {
            return Err(LayoutError::Invalid { what: format!("grid spacing {spacing} m must be positive") });
        }
        let mut warnings = Vec::new();
        for cell in &self.cells {
            let ratio = cell.radius / spacing;
            if ratio < MIN_RADIUS_IN_SPACINGS {
                return Err(LayoutError::TooCoarse { id: cell.id, radius: cell.radius, spacing });
            }
            if ratio < WARN_RADIUS_IN_SPACINGS {
                warnings.push(CellResolutionWarning {
                    id: cell.id,
                    radius_in_spacings: ratio,
                    expected_surface_error: FACET_AREA_ERROR_CONSTANT / (ratio * ratio),
                });
            }
        }
        Ok(warnings)
    }
}

#[cfg(test)]
mod tests {
    use super::super::Cell;
    use super::*;

    #[test]
    fn rejects_coarse_and_warns_marginal_cells() {
        let cell = |id, radius| Cell { id, centre: [0.0; 3], radius, secretion_rate: 1.0 };
        let layout = Layout { cells: vec![cell(0, 10e-6), cell(1, 6e-6)] };
        let warnings = layout.check_resolution(2e-6).unwrap();
        assert_eq!(warnings.len(), 1);
        assert_eq!(warnings[0].id, 1);
        assert!((warnings[0].radius_in_spacings - 3.0).abs() < 1e-12);
        assert!((warnings[0].expected_surface_error - FACET_AREA_ERROR_CONSTANT / 9.0).abs() < 1e-15);
        let layout = Layout { cells: vec![cell(0, 10e-6), cell(1, 6e-6), cell(2, 4e-6)] };
        match layout.check_resolution(4e-6 / 2.4) {
            Err(e @ LayoutError::TooCoarse { id: 2, .. }) => {
                assert_eq!(e.to_string(), "cell 2 of radius 4.00 um spans only 2.40 grid spacings of 1.67 um; at least 2.5 are needed")
            }
            other => panic!("expected TooCoarse for cell 2, got {other:?}"),
        }
    }
}
