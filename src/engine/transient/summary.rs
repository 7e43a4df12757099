//! `summary.json` of a transient run: the steady run's keys (DESIGN.md §6) for the final state, and a
//! `transient` section with the approach to steady state (first times at which the outlet concentration and
//! each cell's sensed rate reach 90% and 99% of their steady values, quantiles over cells), the per-step
//! mass balance, the step counts and the output times.

use std::collections::BTreeMap;

use crate::outputs::summary::{Approach, CellApproach};
use solver::solve_transient::{Crossings, FRACTIONS};

/// Quantile `q` of `values` with +∞ for "not reached": linear interpolation between order statistics
/// (Hyndman & Fan 1996, definition 7, the default of R and NumPy); `None` when it touches a value not reached.
pub fn quantile_reached(values: &[Option<f64>], q: f64) -> Option<f64> {
    let times: Vec<f64> = values.iter().map(|v| v.unwrap_or(f64::INFINITY)).collect();
    // Interpolating towards a value not reached gives +∞; no values give NaN.
    Some(numkit::quantile(&times, q)).filter(|t| t.is_finite())
}

/// The approach-to-steady section: per fraction, the outlet crossing time and the cell quantiles.
pub fn approach(crossings: &Crossings, has_outlet_reference: bool) -> BTreeMap<String, Approach> {
    let mut out = BTreeMap::new();
    for (k, fraction) in FRACTIONS.iter().enumerate() {
        let per_cell: Vec<Option<f64>> = crossings.cells.iter().map(|c| c[k]).collect();
        let reached = per_cell.iter().filter(|v| v.is_some()).count();
        let key = format!("{:.0}_percent", fraction * 100.0);
        out.insert(
            key,
            Approach {
                outlet_concentration: if has_outlet_reference { crossings.outlet[k] } else { None },
                cell_sensed_rate: CellApproach {
                    p10: quantile_reached(&per_cell, 0.1),
                    median: quantile_reached(&per_cell, 0.5),
                    p90: quantile_reached(&per_cell, 0.9),
                    max: quantile_reached(&per_cell, 1.0),
                    cells_reached: reached,
                    cells_not_reached: per_cell.len() - reached,
                },
            },
        );
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantiles_interpolate_and_refuse_unreached() {
        let v = [Some(1.0), Some(2.0), Some(3.0), Some(4.0), Some(5.0)];
        assert_eq!(quantile_reached(&v, 0.5), Some(3.0));
        assert!((quantile_reached(&v, 0.1).unwrap() - 1.4).abs() < 1e-15);
        assert_eq!(quantile_reached(&v, 1.0), Some(5.0));
        let w = [Some(1.0), None, Some(3.0)];
        assert_eq!(quantile_reached(&w, 0.5), Some(3.0));
        assert_eq!(quantile_reached(&w, 1.0), None);
        assert_eq!(quantile_reached(&[], 0.5), None);
    }
}
