//! `[chamber]` and `[grid]`: the chamber must be a whole number of cubic grid cells along every axis. When it
//! is not, the error suggests the nearest spacing that fits all three axes, or the nearest chamber size.

use std::ops::Range;

use super::raw::{RawChamber, RawGrid};
use super::units::Dimension;
use super::validate::{Range0, Source};
use super::CaseError;

/// Relative tolerance on `size / spacing` being a whole number.
const FIT_TOLERANCE: f64 = 1e-6;
/// Refuse grids larger than this many cells per axis (the index arithmetic and memory would not cope).
const MAX_CELLS_PER_AXIS: usize = 100_000;

pub(super) struct FittedGrid {
    pub size: [f64; 3],
    pub grid: mesh::Grid,
    /// The key that set the spacing: `grid.spacing` or `grid.cells_per_radius`.
    pub key: &'static str,
}

/// Whole number of cells of `spacing` in `size`, if it fits within [`FIT_TOLERANCE`].
fn cells_along(size: f64, spacing: f64) -> Option<usize> {
    let n = (size / spacing).round();
    (n >= 1.0 && (n * spacing - size).abs() <= FIT_TOLERANCE * size).then_some(n as usize)
}

/// The spacing nearest to `spacing` that divides all three sizes into whole numbers of cells, if one exists
/// within a factor of two.
fn nearest_fitting_spacing(size: [f64; 3], spacing: f64) -> Option<f64> {
    let n0 = (size[0] / spacing).round().max(1.0) as usize;
    let candidates = (n0 / 2).max(1)..=(2 * n0 + 1).min(n0 + 1_000_000);
    candidates
        .map(|n| size[0] / n as f64)
        .filter(|&h| size.iter().all(|&s| cells_along(s, h).is_some()))
        .min_by(|a, b| (a - spacing).abs().total_cmp(&(b - spacing).abs()))
}

/// A length in micrometres for suggestions, with up to six decimals and no trailing zeros.
fn micrometres(metres: f64) -> String {
    let text = format!("{:.6}", metres * 1e6);
    let text = text.trim_end_matches('0').trim_end_matches('.');
    format!("{text} um")
}

pub(super) fn fit_grid(
    src: &Source,
    chamber: &RawChamber,
    chamber_span: Option<&Range<usize>>,
    grid: &RawGrid,
    grid_span: Option<&Range<usize>>,
    cell_radius: f64,
) -> Result<FittedGrid, CaseError> {
    let Some(size_list) = &chamber.size else {
        return Err(src.missing(
            "chamber.size",
            chamber_span,
            "three lengths, e.g. [\"800 um\", \"400 um\", \"200 um\"]",
        ));
    };
    let sizes = size_list.get_ref();
    if sizes.len() != 3 {
        return Err(src.error(
            "chamber.size",
            Some(&size_list.span()),
            format!("chamber.size has {} values; it needs three lengths (x, y, z)", sizes.len()),
        ));
    }
    let mut size = [0.0; 3];
    for (a, value) in sizes.iter().enumerate() {
        size[a] = src.quantity(&format!("chamber.size[{a}]"), value, Dimension::LENGTH, Range0::Positive)?;
    }

    // Exactly one of spacing / cells_per_radius.
    let (key, span, written, spacing) = match (&grid.spacing, &grid.cells_per_radius) {
        (Some(_), Some(c)) => {
            return Err(src.error(
                "grid.cells_per_radius",
                Some(&c.span()),
                "grid.spacing and grid.cells_per_radius are both given; give only one",
            ))
        }
        (None, None) => {
            return Err(src.missing(
                "grid.spacing",
                grid_span,
                "a length such as \"2 um\", or give grid.cells_per_radius instead",
            ))
        }
        (Some(h), None) => {
            let spacing = src.quantity("grid.spacing", h, Dimension::LENGTH, Range0::Positive)?;
            ("grid.spacing", h.span(), h.get_ref().to_string(), spacing)
        }
        (None, Some(c)) => {
            let per_radius =
                src.quantity("grid.cells_per_radius", c, Dimension::DIMENSIONLESS, Range0::Positive)?;
            ("grid.cells_per_radius", c.span(), c.get_ref().to_string(), cell_radius / per_radius)
        }
    };

    // Said before divisibility, which means nothing at such sizes; the ratio is a float, so it cannot overflow.
    const AXES: [&str; 3] = ["x", "y", "z"];
    for a in 0..3 {
        let ratio = size[a] / spacing;
        if ratio > MAX_CELLS_PER_AXIS as f64 + 0.5 {
            // A chamber over a metre long is the mistake itself; otherwise the grid is too fine.
            let size_key = format!("chamber.size[{a}]");
            let (blame, blame_span) =
                if size[a] > 1.0 { (size_key.as_str(), sizes[a].span()) } else { (key, span.clone()) };
            return Err(src.error(
                blame,
                Some(&blame_span),
                format!(
                    "{size_key} = {} with a grid spacing of {} gives {ratio:.3e} grid cells along {}, more than \
                     {MAX_CELLS_PER_AXIS}; use a smaller chamber.size or a coarser {key}",
                    if size[a] > 1.0 { format!("{:.3e} m", size[a]) } else { micrometres(size[a]) },
                    micrometres(spacing),
                    AXES[a]
                ),
            ));
        }
    }
    // When the radius sets the spacing, a cell wider than the chamber shows up as a spacing that does not
    // divide it; say what is really wrong.
    if key == "grid.cells_per_radius" {
        if let Some(a) = (0..3).find(|&a| 2.0 * cell_radius >= size[a]) {
            return Err(src.error(
                "cells.radius",
                None,
                format!(
                    "cells.radius = {} makes a cell {} across, as wide as or wider than the chamber's {} along {}; \
                     use a smaller cells.radius or a larger chamber.size",
                    micrometres(cell_radius),
                    micrometres(2.0 * cell_radius),
                    micrometres(size[a]),
                    AXES[a]
                ),
            ));
        }
    }

    let counts: Vec<Option<usize>> = size.iter().map(|&s| cells_along(s, spacing)).collect();
    if counts.iter().any(Option::is_none) {
        let ratios: Vec<String> = size.iter().map(|s| format!("{:.3}", s / spacing)).collect();
        let nearest_size: Vec<String> = size
            .iter()
            .map(|&s| format!("\"{}\"", micrometres((s / spacing).round().max(1.0) * spacing)))
            .collect();
        let keep = format!("or keep the spacing and use chamber.size = [{}]", nearest_size.join(", "));
        let suggestion = match (nearest_fitting_spacing(size, spacing), key) {
            (Some(h), "grid.spacing") => {
                format!("the nearest spacing that fits all three axes is {}, {keep}", micrometres(h))
            }
            (Some(h), _) => format!(
                "the nearest grid.cells_per_radius that fits all three axes is {:.6}, {keep}",
                cell_radius / h
            ),
            (None, _) => format!("no nearby spacing fits all three axes; {}", &keep[3..]),
        };
        return Err(src.error(
            key,
            Some(&span),
            format!(
                "{key} = {written} (spacing {}) does not divide the chamber into whole grid cells \
                 (chamber.size / spacing = [{}]); {suggestion}",
                micrometres(spacing),
                ratios.join(", ")
            ),
        ));
    }
    let shape = [0, 1, 2].map(|a| counts[a].unwrap_or(1));
    Ok(FittedGrid { size, grid: mesh::Grid::new([0.0; 3], spacing, shape), key })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fitting_spacing_is_found() {
        // 800 x 400 x 200 um with 3 um: n must be a multiple of 4 near 266.7 → 268 → 2.98507 um.
        let h = nearest_fitting_spacing([800e-6, 400e-6, 200e-6], 3e-6).expect("a spacing fits");
        assert!((h - 800e-6 / 268.0).abs() < 1e-15, "{h}");
        assert_eq!(cells_along(800e-6, 2e-6), Some(400));
        assert_eq!(cells_along(801e-6, 2e-6), None);
    }
}
