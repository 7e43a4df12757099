//! The `[find]` table of a sweep file: instead of running every value of one axis, look for the value where a
//! seed-averaged metric of `sweep.csv` crosses a level, for every combination of the other axes.
//!
//! ```toml
//! [find]
//! metric = "direction_error_median"   # a sweep.csv column
//! level = 1
//! axis = "flow.mean_velocity"         # the key of one [[axis]]: its first and last values bracket the search
//! relative_precision = 0.05           # half-width of the crossing's interval, relative [default 0.05]
//! max_cases = 24                      # cases per combination of the other axes, seeds included [default 12 × seeds]
//! ```

use serde::Deserialize;

use super::axis::Scale;
use super::sweep_file::Axis;
use crate::outputs::columns::aggregated_columns;

/// A checked `[find]` table.
#[derive(Clone, Debug, PartialEq)]
pub struct FindSpec {
    /// The `sweep.csv` column whose seed mean is searched.
    pub metric: String,
    pub level: f64,
    /// The searched axis (its key, and its position among the sweep file's axes).
    pub axis: String,
    pub axis_index: usize,
    pub relative_precision: f64,
    /// `None`: 12 parameter values for every seed.
    pub max_cases: Option<usize>,
}

/// Parameter values per combination the default budget allows (each run for every seed).
pub const DEFAULT_VALUES: usize = 12;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawFind {
    metric: String,
    level: f64,
    pub axis: String,
    relative_precision: Option<f64>,
    max_cases: Option<i64>,
}

/// Summary metrics of `sweep.csv` (the others are `<quantity>_<p10|median|p90>` and `sensing.*`).
const METRIC_PREFIXES: [&str; 6] =
    ["cells.", "flow.", "transport.", "mass_balance.", "estimates.", "sensing."];

/// Whether `name` can be a metric column of `sweep.csv` (the cases decide whether it is present).
fn is_metric_name(name: &str) -> bool {
    METRIC_PREFIXES.iter().any(|p| name.starts_with(p) && name.len() > p.len())
        || aggregated_columns()
            .iter()
            .any(|q| ["p10", "median", "p90"].iter().any(|s| name == format!("{}_{s}", q.name)))
}

impl FindSpec {
    /// Check `[find]` against the axes; `Err((key, message))` names the key at fault.
    pub fn check(raw: RawFind, axes: &[Axis]) -> Result<FindSpec, (String, String)> {
        let bad = |key: &str, message: String| Err((format!("find.{key}"), message));
        let metric = raw.metric.trim().to_string();
        if !is_metric_name(&metric) {
            return bad(
                "metric",
                format!(
                    "\"{metric}\" is not a metric column of sweep.csv (e.g. direction_error_median, \
                     sensing.failed_fraction, mass_balance.uptake)"
                ),
            );
        }
        if !raw.level.is_finite() {
            return bad("level", format!("{} is not a finite number", raw.level));
        }
        let Some(axis_index) = axes.iter().position(|a| a.key == raw.axis.trim()) else {
            let keys: Vec<&str> = axes.iter().map(|a| a.key.as_str()).collect();
            return bad("axis", format!("\"{}\" is not the key of an [[axis]] (axes: {keys:?})", raw.axis));
        };
        let axis = &axes[axis_index];
        if axis.key == super::expand::SEED_KEY {
            return bad("axis", "the layout seed gives the replicates; it cannot be searched".into());
        }
        if axis.values.len() < 2 {
            return bad(
                "axis",
                format!("axis {} needs two values (from and to) to bracket the search", axis.key),
            );
        }
        let (first, last) = (&axis.values[0], &axis.values[axis.values.len() - 1]);
        match (first.si, last.si) {
            (Some(a), Some(b)) if a != b => {
                if matches!(first.toml, toml::Value::Integer(_)) {
                    return bad(
                        "axis",
                        format!("axis {} has whole-number values; the search needs real numbers", axis.key),
                    );
                }
                if axis.scale == Scale::Log && (a <= 0.0 || b <= 0.0) {
                    return bad(
                        "axis",
                        format!("axis {} is searched in log space but has ends ≤ 0", axis.key),
                    );
                }
                if first.dimension != last.dimension {
                    return bad(
                        "axis",
                        format!("axis {}: its first and last values differ in kind", axis.key),
                    );
                }
            }
            _ => {
                return bad(
                    "axis",
                    format!(
                        "axis {} needs two different numbers at its ends to bracket the search",
                        axis.key
                    ),
                )
            }
        }
        let relative_precision = raw.relative_precision.unwrap_or(0.05);
        if !(relative_precision > 0.0 && relative_precision < 1.0) {
            return bad("relative_precision", format!("{relative_precision} must lie between 0 and 1"));
        }
        let max_cases = match raw.max_cases {
            None => None,
            Some(n) if n >= 1 && n as u64 <= super::expand::MAX_CASES as u64 => Some(n as usize),
            Some(n) => {
                return bad("max_cases", format!("{n} must be between 1 and {}", super::expand::MAX_CASES))
            }
        };
        Ok(FindSpec {
            metric,
            level: raw.level,
            axis: axis.key.clone(),
            axis_index,
            relative_precision,
            max_cases,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn metric_names() {
        for good in [
            "direction_error_median",
            "sensing.failed_fraction",
            "mass_balance.uptake",
            "bound_rate_p90",
            "self_signal_share_p10",
        ] {
            assert!(is_metric_name(good), "{good}");
        }
        for bad in [
            "failed_fraction",
            "case_id",
            "status",
            "sensing.",
            "direction_error_mean",
            "signal_fraction_median",
        ] {
            assert!(!is_metric_name(bad), "{bad}");
        }
    }
}
