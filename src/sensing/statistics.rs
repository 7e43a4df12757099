//! Per-run sensing statistics: which share of the cells cannot read the flow direction, and where along the
//! flow they sit.
//!
//! A cell *fails* when its counting-noise `direction_error` exceeds `readable_error`, or is not a finite
//! number (no contrast at all gives ∞). Quantiles interpolate between order statistics with ∞ taking part
//! in the ordering and NaN left out (`numkit::quantile`). The chamber's x range, less
//! `margin` at each end, is cut into `position_bins` equal slabs; a cell belongs to the slab of its centre.

use std::collections::BTreeMap;

use serde::{Deserialize, Deserializer, Serialize, Serializer};

use numkit::{quantile_sorted, sorted_without_nan};

/// The `[sensing]` keys that shape the statistics.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StatisticsParams {
    /// Direction error at which a cell can no longer tell front from back; default 1.
    pub readable_error: f64,
    /// Slabs along x; default 8.
    pub position_bins: usize,
    /// Cells whose centre lies closer than this to the x_min or x_max face are left out (m); default 0.
    pub margin: f64,
}

impl Default for StatisticsParams {
    fn default() -> Self {
        StatisticsParams { readable_error: 1.0, position_bins: 8, margin: 0.0 }
    }
}

/// The per-cell values the statistics read; every slice has one value per cell.
pub struct CellValues<'a> {
    /// Centre x (m).
    pub x: &'a [f64],
    pub direction_error: &'a [f64],
    /// The direction error the per-cell estimate predicts (`estimate_direction_error`), where the run has it.
    pub estimate_direction_error: Option<&'a [f64]>,
    /// Transient runs: each cell's time to a readable cue (NaN: never); `None` in steady runs.
    pub time_to_readable: Option<&'a [f64]>,
    /// Further quantities summarised per slab by name (NaN where a cell has no value, e.g. cells left out
    /// of the self/neighbour split).
    pub quantities: Vec<(&'a str, &'a [f64])>,
}

/// p10, median and p90 of some cells' values (NaN when none has a value).
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct Spread {
    #[serde(serialize_with = "real_or_text", deserialize_with = "real_from_text")]
    pub p10: f64,
    #[serde(serialize_with = "real_or_text", deserialize_with = "real_from_text")]
    pub median: f64,
    #[serde(serialize_with = "real_or_text", deserialize_with = "real_from_text")]
    pub p90: f64,
    /// Cells with a value (not NaN).
    pub count: usize,
}

impl Spread {
    pub fn of(values: impl Iterator<Item = f64>) -> Spread {
        let sorted = sorted_without_nan(&values.collect::<Vec<_>>());
        let q = |p| quantile_sorted(&sorted, p);
        Spread { p10: q(0.1), median: q(0.5), p90: q(0.9), count: sorted.len() }
    }
}

/// One slab along the flow.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Slab {
    pub index: usize,
    /// x range (m), lower bound inclusive.
    pub x_low: f64,
    pub x_high: f64,
    pub cells: usize,
    pub failed: usize,
    /// `failed / cells`; NaN (null) for an empty slab.
    #[serde(serialize_with = "real_or_text", deserialize_with = "real_from_text")]
    pub failed_fraction: f64,
    /// The failed fraction the per-cell estimate (`estimate_direction_error`) predicts for the same cells;
    /// NaN (null) for an empty slab or without estimate columns.
    #[serde(default = "nan", serialize_with = "real_or_text", deserialize_with = "real_from_text")]
    pub estimated_failed_fraction: f64,
    pub direction_error: Spread,
    pub quantities: BTreeMap<String, Spread>,
}

fn nan() -> f64 {
    f64::NAN
}

/// Slabs with at least this many cells are compared with the estimate.
pub const ESTIMATE_CHECK_MIN_CELLS: usize = 10;
/// A slab whose estimated and measured failed fractions differ by more than this is reported.
pub const ESTIMATE_CHECK_GAP: f64 = 0.25;

/// One line when the per-cell estimate misjudges the failed fraction of some slab with at least
/// [`ESTIMATE_CHECK_MIN_CELLS`] cells by more than [`ESTIMATE_CHECK_GAP`] (the worst slab named).
pub fn estimate_disagreement(stats: &SensingStatistics) -> Option<String> {
    let gap = |s: &Slab| (s.estimated_failed_fraction - s.failed_fraction).abs();
    let off: Vec<&Slab> = stats
        .by_position
        .iter()
        .filter(|s| s.cells >= ESTIMATE_CHECK_MIN_CELLS && gap(s) > ESTIMATE_CHECK_GAP)
        .collect();
    let worst = off.iter().copied().max_by(|a, b| gap(a).total_cmp(&gap(b)))?;
    Some(format!(
        "the per-cell estimate misjudges the failed fraction in {} of {} slabs along x by more than {ESTIMATE_CHECK_GAP}; worst slab {} (x {:.4e}..{:.4e} m, {} cells): estimated {:.2}, measured {:.2} (summary.json: sensing.by_position)",
        off.len(),
        stats.by_position.len(),
        worst.index,
        worst.x_low,
        worst.x_high,
        worst.cells,
        worst.estimated_failed_fraction,
        worst.failed_fraction
    ))
}

/// Times to a readable cue of the counted cells (transient runs): quantiles of the cells that became readable
/// and how many never did by the end of the run.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct ReadableTimes {
    /// Over the cells that became readable (`count` of them).
    #[serde(flatten)]
    pub quantiles: Spread,
    /// Cells whose window direction error was above `readable_error` at the end.
    pub never: usize,
}

/// The `sensing` object of `summary.json`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SensingStatistics {
    pub readable_error: f64,
    /// `[sensing] statistics_margin` (m).
    pub statistics_margin: f64,
    /// Cells counted, and left out for lying within the margin of x_min or x_max.
    pub cells_counted: usize,
    pub cells_left_out: usize,
    pub failed: usize,
    /// `failed / cells_counted`; NaN (null) without counted cells.
    #[serde(serialize_with = "real_or_text", deserialize_with = "real_from_text")]
    pub failed_fraction: f64,
    pub direction_error: Spread,
    /// Transient runs only (s).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_to_readable: Option<ReadableTimes>,
    pub by_position: Vec<Slab>,
}

/// True when a cell cannot read the flow direction.
pub fn fails(direction_error: f64, readable_error: f64) -> bool {
    direction_error.is_nan() || direction_error > readable_error
}

/// The statistics of `cells` in a chamber spanning `x_range` (m).
pub fn sensing_statistics(
    cells: &CellValues<'_>,
    x_range: [f64; 2],
    params: &StatisticsParams,
) -> SensingStatistics {
    let (low, high) = (x_range[0] + params.margin, x_range[1] - params.margin);
    let counted: Vec<usize> =
        (0..cells.x.len()).filter(|&i| cells.x[i] >= low && cells.x[i] <= high).collect();
    let bins = params.position_bins.max(1);
    let width = (high - low) / bins as f64;
    let mut members: Vec<Vec<usize>> = vec![Vec::new(); bins];
    for &i in &counted {
        let b = if width > 0.0 { ((cells.x[i] - low) / width).floor() as usize } else { 0 };
        members[b.min(bins - 1)].push(i);
    }
    let readable = params.readable_error;
    let failed_of =
        |ids: &[usize]| ids.iter().filter(|&&i| fails(cells.direction_error[i], readable)).count();
    let fraction = |failed: usize, n: usize| if n == 0 { f64::NAN } else { failed as f64 / n as f64 };
    let by_position = members
        .iter()
        .enumerate()
        .map(|(index, ids)| {
            let failed = failed_of(ids);
            Slab {
                index,
                x_low: low + index as f64 * width,
                x_high: if index + 1 == bins { high } else { low + (index + 1) as f64 * width },
                cells: ids.len(),
                failed,
                failed_fraction: fraction(failed, ids.len()),
                estimated_failed_fraction: cells.estimate_direction_error.map_or(f64::NAN, |e| {
                    fraction(ids.iter().filter(|&&i| fails(e[i], readable)).count(), ids.len())
                }),
                direction_error: Spread::of(ids.iter().map(|&i| cells.direction_error[i])),
                quantities: cells
                    .quantities
                    .iter()
                    .map(|(name, values)| (name.to_string(), Spread::of(ids.iter().map(|&i| values[i]))))
                    .collect(),
            }
        })
        .collect();
    let failed = failed_of(&counted);
    SensingStatistics {
        readable_error: readable,
        statistics_margin: params.margin,
        cells_counted: counted.len(),
        cells_left_out: cells.x.len() - counted.len(),
        failed,
        failed_fraction: fraction(failed, counted.len()),
        direction_error: Spread::of(counted.iter().map(|&i| cells.direction_error[i])),
        time_to_readable: cells.time_to_readable.map(|t| ReadableTimes {
            quantiles: Spread::of(counted.iter().map(|&i| t[i])),
            never: counted.iter().filter(|&&i| t[i].is_nan()).count(),
        }),
        by_position,
    }
}

/// JSON has no non-finite numbers: ±∞ is written as the text `"inf"`/`"-inf"`, NaN as `null`.
pub fn real_or_text<S: Serializer>(x: &f64, s: S) -> Result<S::Ok, S::Error> {
    if x.is_nan() {
        s.serialize_none()
    } else if x.is_infinite() {
        s.serialize_str(if *x > 0.0 { "inf" } else { "-inf" })
    } else {
        s.serialize_f64(*x)
    }
}

/// Reads what [`real_or_text`] wrote.
pub fn real_from_text<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
    Ok(json_real(&serde_json::Value::deserialize(d)?))
}

/// The number a `summary.json` value stands for: numbers, `"inf"`/`"-inf"`; NaN for anything else.
pub fn json_real(value: &serde_json::Value) -> f64 {
    match value {
        serde_json::Value::Number(n) => n.as_f64().unwrap_or(f64::NAN),
        serde_json::Value::String(s) if s == "inf" => f64::INFINITY,
        serde_json::Value::String(s) if s == "-inf" => f64::NEG_INFINITY,
        _ => f64::NAN,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stats(x: &[f64], e: &[f64], params: StatisticsParams) -> SensingStatistics {
        let cells = CellValues {
            x,
            direction_error: e,
            estimate_direction_error: None,
            time_to_readable: None,
            quantities: vec![("a", e)],
        };
        sensing_statistics(&cells, [0.0, 100.0], &params)
    }

    #[test]
    fn infinite_and_nan_errors_fail_and_infinity_is_ordered() {
        let x = [10.0, 20.0, 30.0, 40.0, 60.0];
        let e = [0.5, 1.0, 1.5, f64::INFINITY, f64::NAN];
        let s = stats(&x, &e, StatisticsParams { position_bins: 2, ..Default::default() });
        assert_eq!((s.cells_counted, s.failed), (5, 3), "1.0 is still readable; 1.5, ∞ and NaN are not");
        assert_eq!(s.failed_fraction, 0.6);
        // Ordered 0.5 1 1.5 ∞ (NaN left out): median between 1 and 1.5, p90 at ∞.
        assert_eq!(s.direction_error.median, 1.25);
        assert_eq!(s.direction_error.p90, f64::INFINITY);
        assert_eq!(s.direction_error.count, 4);
        assert_eq!(s.by_position[0].cells, 4);
        assert_eq!(s.by_position[1].cells, 1);
        assert_eq!(s.by_position[0].failed_fraction, 0.5);
        assert_eq!(s.by_position[1].failed_fraction, 1.0);
        assert!(s.by_position[1].direction_error.median.is_nan());
        assert_eq!((s.by_position[1].x_low, s.by_position[1].x_high), (50.0, 100.0));
    }

    #[test]
    fn margin_leaves_out_cells_near_both_ends_and_slabs_span_the_rest() {
        let x = [5.0, 15.0, 50.0, 85.0, 95.0, 100.0];
        let e = [2.0; 6];
        let s = stats(&x, &e, StatisticsParams { position_bins: 4, margin: 10.0, readable_error: 1.0 });
        assert_eq!((s.cells_counted, s.cells_left_out), (3, 3));
        assert_eq!(
            s.by_position.iter().map(|b| b.cells).collect::<Vec<_>>(),
            [1, 0, 1, 1],
            "slabs 10–30, 30–50, 50–70, 70–90"
        );
        assert_eq!((s.by_position[0].x_low, s.by_position[3].x_high), (10.0, 90.0));
        assert!(s.by_position[1].failed_fraction.is_nan());
        assert_eq!(s.by_position[0].quantities["a"].median, 2.0);
    }

    #[test]
    fn readable_times_count_the_never_readable_and_leave_them_out_of_the_quantiles() {
        let (x, e) = ([10.0, 20.0, 30.0, 95.0], [0.5, 0.8, 2.0, 0.5]);
        let t = [100.0, 300.0, f64::NAN, 1.0];
        let cells = CellValues {
            x: &x,
            direction_error: &e,
            estimate_direction_error: None,
            time_to_readable: Some(&t),
            quantities: vec![],
        };
        let s = sensing_statistics(
            &cells,
            [0.0, 100.0],
            &StatisticsParams { margin: 10.0, ..Default::default() },
        );
        let r = s.time_to_readable.unwrap();
        assert_eq!(
            (r.never, r.quantiles.count, r.quantiles.median),
            (1, 2, 200.0),
            "the cell at 95 is left out"
        );
        let j = serde_json::to_value(&s).unwrap();
        assert_eq!(
            (j["time_to_readable"]["never"].as_u64(), j["time_to_readable"]["median"].as_f64()),
            (Some(1), Some(200.0))
        );
        let back: SensingStatistics = serde_json::from_value(j).unwrap();
        assert_eq!(back.time_to_readable, s.time_to_readable);
    }

    /// Ten cells in one slab: the estimate calls 2 failed where 6 are (gap 0.4 > 0.25): one line; with nine
    /// cells the slab is too small to judge.
    #[test]
    fn a_slab_the_estimate_misjudges_is_reported_once() {
        let x = [10.0; 10];
        let measured = [2.0, 2.0, 2.0, 2.0, 2.0, 2.0, 0.5, 0.5, 0.5, 0.5];
        let estimated = [2.0, 2.0, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5];
        let cells = |n: usize| CellValues {
            x: &x[..n],
            direction_error: &measured[..n],
            estimate_direction_error: Some(&estimated[..n]),
            time_to_readable: None,
            quantities: vec![],
        };
        let params = StatisticsParams { position_bins: 2, ..Default::default() };
        let s = sensing_statistics(&cells(10), [0.0, 100.0], &params);
        assert_eq!(
            (s.by_position[0].failed_fraction, s.by_position[0].estimated_failed_fraction),
            (0.6, 0.2)
        );
        assert!(s.by_position[1].estimated_failed_fraction.is_nan());
        let line = estimate_disagreement(&s).expect("reported");
        assert!(line.contains("1 of 2 slabs") && line.contains("estimated 0.20, measured 0.60"), "{line}");
        assert!(estimate_disagreement(&sensing_statistics(&cells(9), [0.0, 100.0], &params)).is_none());
    }

    #[test]
    fn json_keeps_infinity_as_text_and_reads_it_back() {
        let spread = Spread { p10: 1.0, median: f64::INFINITY, p90: f64::NAN, count: 2 };
        let j = serde_json::to_value(spread).unwrap();
        assert_eq!(j["median"], "inf");
        assert!(j["p90"].is_null());
        assert_eq!(json_real(&j["median"]), f64::INFINITY);
        assert_eq!(json_real(&j["p10"]), 1.0);
        assert!(json_real(&j["p90"]).is_nan());
        let back: Spread = serde_json::from_value(j).unwrap();
        assert_eq!((back.p10, back.median, back.count), (1.0, f64::INFINITY, 2));
        assert!(back.p90.is_nan());
    }
}
