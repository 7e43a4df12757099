//! `summary.json` as a typed value: [`RunSummary`], written by `run` (steady and transient) and read back
//! through the same type by `collect` and the figures.
//!
//! The file is the structure serialised with its keys in alphabetical order at every level, pretty-printed
//! and newline-terminated. Everything that varies between reruns of the same case (wall times, peak memory, the
//! cost of the self/neighbour split) is in [`Resources`] (`resources`); the rest of the file is the same byte for byte when
//! a case is run again on the same machine and thread count. Non-finite numbers are written as `null` (JSON has
//! none); fields that may hold one read `null` back as NaN.
//!
//! Adding a section: one field of [`RunSummary`] (an `Option` with `skip_serializing_if` when only some runs
//! have it).

use std::collections::BTreeMap;
use std::path::Path;

use anyhow::Context;
use serde::{Deserialize, Deserializer, Serialize};

/// The whole of `summary.json`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunSummary {
    pub version: String,
    pub git_revision: Option<String>,
    pub title: String,
    pub case_sha256: String,
    /// `"transient"` for transient runs; absent for steady runs.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub solve_mode: Option<String>,
    pub grid: GridSummary,
    /// Measured resources: the only section that changes when the same case runs again. Summaries of
    /// versions before this section was named `resources` (`timing_s`) read as `None`.
    #[serde(default, skip_serializing_if = "Option::is_none", deserialize_with = "current_resources")]
    pub resources: Option<Resources>,
    pub flow: FlowSummary,
    pub transport: TransportSummary,
    pub mass_balance: MassBalanceSummary,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub transient: Option<TransientSummary>,
    pub estimates: EstimatesSummary,
    pub cells: CellsSummary,
    /// Where sensing fails: failed fraction, quantiles, slabs along x (absent in summaries of older versions).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sensing: Option<crate::sensing::statistics::SensingStatistics>,
    pub warnings: Vec<String>,
    /// Units by dotted key; `cells.csv` maps each column to its unit.
    pub units: BTreeMap<String, Unit>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct GridSummary {
    pub shape: [usize; 3],
    pub spacing: f64,
    pub origin: [f64; 3],
}

/// Measured resources of the run (`summary.json` → `resources`): wall time (s) and peak resident memory
/// (bytes) of each stage it went through, in run order geometry, flow, transport, post, self_neighbour_split,
/// write (transient runs: steady_reference and time_loop instead of transport and post), the whole run's wall
/// time and the cost of the self/neighbour split.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct Resources {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub geometry: Option<StageCost>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub flow: Option<StageCost>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub transport: Option<StageCost>,
    /// Part of `transport.wall_s`: the far-field faces' coefficients (steady runs with far-field faces only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub transport_far_field_s: Option<f64>,
    /// Per-cell sensing and the mass balance.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub post: Option<StageCost>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub self_neighbour_split: Option<StageCost>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub steady_reference: Option<StageCost>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_loop: Option<StageCost>,
    /// The output files up to `summary.json` (figures are drawn after it).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub write: Option<StageCost>,
    pub total_s: f64,
    pub peak_memory_scope: PeakScope,
    /// Runs that split some cells' fields into own and neighbour parts (a transient run: only when asked).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub self_neighbour: Option<SplitCost>,
}

/// What a stage's `peak_resident_bytes` covers.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PeakScope {
    /// The stage alone: the kernel's high-water mark was reset when it started.
    Stage,
    /// The process from its start to the stage's end (the kernel refused the reset).
    SinceStart,
    /// Not measured (no `/proc`, or cases of a sweep sharing one process): the peaks are `null`.
    #[default]
    Unavailable,
}

/// One stage: wall time (s) and peak resident set (bytes; `None` where it cannot be measured).
#[derive(Clone, Copy, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct StageCost {
    pub wall_s: f64,
    pub peak_resident_bytes: Option<u64>,
}

impl Resources {
    /// The largest stage peak (bytes), if any was measured.
    pub fn peak_resident_bytes(&self) -> Option<u64> {
        [
            self.geometry,
            self.flow,
            self.transport,
            self.post,
            self.self_neighbour_split,
            self.steady_reference,
            self.time_loop,
            self.write,
        ]
        .iter()
        .flatten()
        .filter_map(|c| c.peak_resident_bytes)
        .max()
    }
}

/// Wall time of the self/neighbour split (s). In a transient run the own fields are integrated step by step
/// inside the time loop: `setup_s` is 0, `solve_s` their time in this process, `seconds_per_right_hand_side`
/// that per chosen cell (one time integration each) and `transport_s` the time loop without them.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SplitCost {
    /// The split's own preparation (the facets of each cell); the operator and hierarchy are the total solve's.
    pub setup_s: f64,
    pub solve_s: f64,
    pub seconds_per_right_hand_side: f64,
    /// The first transport solve, for comparison.
    pub transport_s: f64,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FlowSummary {
    /// `"darcy"`, `"brinkman"` or `"stokes"`.
    pub model: String,
    pub mean_velocity: f64,
    pub iterations: usize,
    #[serde(deserialize_with = "real")]
    pub relative_residual: f64,
    #[serde(deserialize_with = "real")]
    pub max_divergence: f64,
    #[serde(deserialize_with = "real")]
    pub pressure_drop: f64,
    #[serde(flatten)]
    pub mode: FlowMode,
}

/// The flow keys only one kind of run has.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum FlowMode {
    Steady {
        screening_length_resolved: bool,
        expected_drag_error: Option<f64>,
        suggested_spacing: Option<f64>,
    },
    Transient {
        change: Option<FlowChange>,
    },
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FlowChange {
    pub time: f64,
    pub mean_velocity_after: f64,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TransportSummary {
    pub iterations: usize,
    #[serde(flatten)]
    pub mode: TransportMode,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum TransportMode {
    Steady {
        #[serde(deserialize_with = "real")]
        relative_residual: f64,
        #[serde(deserialize_with = "real")]
        max_cell_peclet: f64,
        upwinded_faces: usize,
    },
    Transient {
        #[serde(deserialize_with = "real")]
        steady_reference_balance_error: f64,
    },
}

/// Ligand balance of the final state (molecules/s; `stored` in molecules).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct MassBalanceSummary {
    #[serde(deserialize_with = "real")]
    pub secreted: f64,
    #[serde(deserialize_with = "real")]
    pub outflow: f64,
    #[serde(deserialize_with = "real")]
    pub uptake: f64,
    #[serde(deserialize_with = "real")]
    pub decay: f64,
    #[serde(deserialize_with = "real")]
    pub accumulation: f64,
    #[serde(deserialize_with = "real")]
    pub relative_error: f64,
    /// Transient runs: ligand in the chamber and the worst balance of one step.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stored: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub worst_step_relative_error: Option<f64>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct TransientSummary {
    pub end_time: f64,
    pub final_time: f64,
    pub stopped_at_steady: bool,
    pub steady_distance: f64,
    pub stepping: Stepping,
    pub steps: usize,
    pub rejected_steps: usize,
    pub checkpoints_written_by_this_process: usize,
    pub window_start: f64,
    /// `"zero"` or the path of the `fields.h5` read.
    pub initial_condition: String,
    pub steady_outlet_concentration: Option<f64>,
    /// Per fraction (`"90_percent"`, `"99_percent"`): when the outlet and the cells got there.
    pub time_to_steady: BTreeMap<String, Approach>,
    pub outputs: OutputSeries,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Stepping {
    pub adaptive: bool,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error_tolerance: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub initial_step: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub time_step: Option<f64>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Approach {
    pub outlet_concentration: Option<f64>,
    pub cell_sensed_rate: CellApproach,
}

/// Quantiles over the cells of the first time each reached the fraction (`None`: some never did).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CellApproach {
    pub p10: Option<f64>,
    pub median: Option<f64>,
    pub p90: Option<f64>,
    pub max: Option<f64>,
    pub cells_reached: usize,
    pub cells_not_reached: usize,
}

/// One entry per output time.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct OutputSeries {
    pub time: Vec<f64>,
    pub outlet_concentration: Vec<Option<f64>>,
    #[serde(deserialize_with = "reals")]
    pub stored: Vec<f64>,
    #[serde(deserialize_with = "reals")]
    pub balance_relative_error: Vec<f64>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct EstimatesSummary {
    pub meanfield_outlet_concentration: Option<f64>,
    pub measured_outlet_concentration: Option<f64>,
    /// Low-Péclet anisotropy of an isolated cell in the case's flow model.
    pub isolated_anisotropy: Option<f64>,
    /// `U a/D` and `U L_x/D` at the case's mean velocity.
    pub peclet_cell: f64,
    pub peclet_chamber: f64,
    /// Median, p10, p90 of the estimate, ratio and split columns by column name.
    pub per_cell: BTreeMap<String, ColumnQuantiles>,
    /// Which cells were split into own and neighbour parts (steady runs; transient runs that asked for it).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub self_neighbour: Option<SplitSummary>,
    /// The `estimate` command's JSON for the case.
    pub case: CaseEstimatesSummary,
}

/// The estimates of a case without a solve: `estimates.case` of `summary.json` and `plumefield estimate --json`
/// (SI units; `null` where an estimate does not apply).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CaseEstimatesSummary {
    /// `"darcy"`, `"brinkman"` or `"stokes"`.
    pub flow_model: String,
    /// a/√K of a Brinkman medium.
    pub brinkman_alpha: Option<f64>,
    pub flow_resolution: Option<FlowResolutionSummary>,
    /// Absent in summaries written before the boundary-layer guard.
    #[serde(default)]
    pub boundary_layer: Option<BoundaryLayerSummary>,
    pub radius: f64,
    #[serde(deserialize_with = "real")]
    pub peclet_cell: f64,
    #[serde(deserialize_with = "real")]
    pub peclet_chamber: f64,
    pub biot: Option<f64>,
    #[serde(deserialize_with = "real")]
    pub decay_number: f64,
    pub own_surface_concentration: Option<f64>,
    pub isolated_anisotropy: Option<f64>,
    #[serde(deserialize_with = "real")]
    pub number_density: f64,
    #[serde(deserialize_with = "real")]
    pub volume_fraction: f64,
    pub background: BackgroundSummary,
    pub profile: ProfileSummary,
    pub profile_dense: DenseProfileSummary,
    pub integration_time: f64,
    pub critical_density: Option<CriticalDensitySummary>,
    /// The critical density taken at each point of `profile` (x in m); absent in summaries written before.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub critical_density_by_position: Vec<CriticalDensityAt>,
    /// Whether the mean-field estimate is expected to hold; absent in summaries written before.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mean_field_regime: Option<MeanFieldRegimeSummary>,
    pub forecast: ForecastSummary,
    pub units: BTreeMap<String, String>,
}

/// The critical density with the direction error taken at downstream position `x` (m).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CriticalDensityAt {
    pub x: f64,
    pub critical_density: Option<CriticalDensitySummary>,
}

/// The criteria of the mean-field estimate (volume fraction, cell and chamber Péclet numbers) the case breaks.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct MeanFieldRegimeSummary {
    pub holds: bool,
    pub breaches: Vec<String>,
    /// Width of the outlet layer where the background gradient is forced to zero, 3·D/U (m); `null` without a
    /// through-flow column.
    pub outlet_layer: Option<f64>,
}

/// The Brinkman screening length is under-resolved.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FlowResolutionSummary {
    pub screening_length: f64,
    pub spacing: f64,
    pub expected_drag_error: f64,
    pub suggested_spacing: f64,
    pub message: String,
}

/// The boundary layers at the cells are under-resolved.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct BoundaryLayerSummary {
    pub surface_peclet: f64,
    pub expected_error: f64,
    pub suggested_spacing: f64,
    pub message: String,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct BackgroundSummary {
    /// `"column"`, `"uniform"`, `"isolated"` or `"none"`.
    pub kind: String,
    pub note: String,
    pub outlet_concentration: Option<f64>,
}

/// The typical cell's estimates at points along x.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ProfileSummary {
    pub x: Vec<f64>,
    #[serde(deserialize_with = "reals")]
    pub background: Vec<f64>,
    #[serde(deserialize_with = "reals")]
    pub mean_surface_concentration: Vec<f64>,
    #[serde(deserialize_with = "reals")]
    pub anisotropy_along_flow: Vec<f64>,
    pub direction_error: Vec<Unbounded>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct DenseProfileSummary {
    pub x: Vec<f64>,
    #[serde(deserialize_with = "reals")]
    pub anisotropy_along_flow: Vec<f64>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CriticalDensitySummary {
    /// Where crowding raises the direction error through `readable_error` (null: `none_because` says why).
    pub density: Option<f64>,
    pub readable_error: f64,
    pub none_because: Option<String>,
    pub range: [f64; 2],
    /// Where the direction error is taken: `"outlet"`, or `"at x"` inside `critical_density_by_position`.
    pub position: String,
    pub isolated_direction_error: Unbounded,
    pub case_direction_error: Unbounded,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ForecastSummary {
    pub grid_cells: usize,
    pub memory_bytes: f64,
    pub seconds: f64,
    pub decompose_seconds: f64,
}

/// A number that may be infinite: JSON has no infinity, so it is written as the string `"inf"` (or `"-inf"`).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Unbounded(pub f64);

impl Serialize for Unbounded {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match self.0 {
            x if x.is_finite() => serializer.serialize_f64(x),
            x if x > 0.0 => serializer.serialize_str("inf"),
            x if x < 0.0 => serializer.serialize_str("-inf"),
            // NaN: `null`, as every other non-finite number.
            _ => serializer.serialize_none(),
        }
    }
}

impl<'de> Deserialize<'de> for Unbounded {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        #[derive(Deserialize)]
        #[serde(untagged)]
        enum Written {
            Number(Option<f64>),
            Text(String),
        }
        Ok(Unbounded(match Written::deserialize(deserializer)? {
            Written::Number(x) => x.unwrap_or(f64::NAN),
            Written::Text(t) if t == "inf" => f64::INFINITY,
            Written::Text(t) if t == "-inf" => f64::NEG_INFINITY,
            Written::Text(t) => return Err(serde::de::Error::custom(format!("not a number: {t:?}"))),
        }))
    }
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ColumnQuantiles {
    pub median: Option<f64>,
    pub p10: Option<f64>,
    pub p90: Option<f64>,
    pub count: usize,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SplitSummary {
    /// The `sensing.decompose` selection as written by the case validation.
    pub selection: String,
    pub cells: usize,
    /// Krylov iterations of each cell's own solve (summed over the time steps in a transient run).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub iterations: Option<Vec<usize>>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CellsSummary {
    pub count: usize,
    #[serde(deserialize_with = "real")]
    pub volume_fraction: f64,
    #[serde(deserialize_with = "real")]
    pub number_density: f64,
}

/// A unit, or the unit of each `cells.csv` column.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum Unit {
    One(String),
    Columns(BTreeMap<String, String>),
}

/// A number that was written as `null` because it was not finite reads back as NaN.
fn real<'de, D: Deserializer<'de>>(deserializer: D) -> Result<f64, D::Error> {
    Ok(Option::<f64>::deserialize(deserializer)?.unwrap_or(f64::NAN))
}

/// The `resources` section, or `None` for a section this version does not read (written by an older one).
fn current_resources<'de, D: Deserializer<'de>>(deserializer: D) -> Result<Option<Resources>, D::Error> {
    let value = Option::<serde_json::Value>::deserialize(deserializer)?;
    Ok(value.and_then(|v| Resources::deserialize(v).ok()))
}

/// [`real`] for every element.
fn reals<'de, D: Deserializer<'de>>(deserializer: D) -> Result<Vec<f64>, D::Error> {
    Ok(Vec::<Option<f64>>::deserialize(deserializer)?.into_iter().map(|v| v.unwrap_or(f64::NAN)).collect())
}

impl RunSummary {
    /// Writes the summary to `path` atomically (keys sorted, pretty, newline-terminated).
    pub fn write(&self, path: &Path) -> anyhow::Result<()> {
        // Through `serde_json::Value`, whose maps sort their keys: the file's key order does not depend on
        // the order of the fields here.
        let value = serde_json::to_value(self).context("cannot serialise the run summary")?;
        crate::io::write_summary_json(path, &value)
    }

    /// Reads a `summary.json` written by [`RunSummary::write`].
    pub fn read(path: &Path) -> anyhow::Result<Self> {
        let bytes = std::fs::read(path).with_context(|| format!("cannot read {}", path.display()))?;
        serde_json::from_slice(&bytes)
            .with_context(|| format!("{} is not a summary of this version of plumefield", path.display()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn resources_round_trip_and_an_older_timing_section_reads_as_none() {
        let stage = |wall_s, peak| Some(StageCost { wall_s, peak_resident_bytes: peak });
        let r = Resources {
            geometry: stage(0.5, Some(1 << 30)),
            write: stage(1.5, None),
            total_s: 2.0,
            peak_memory_scope: PeakScope::Stage,
            ..Resources::default()
        };
        assert_eq!(r.peak_resident_bytes(), Some(1 << 30));
        let json = serde_json::to_value(&r).unwrap();
        assert_eq!(json["peak_memory_scope"], "stage");
        assert!(json.get("flow").is_none());
        let de = |v: serde_json::Value| current_resources(v).unwrap();
        assert_eq!(de(json), Some(r));
        let old = serde_json::json!({ "geometry": 0.1, "flow": 0.2, "write": 0.3, "total": 0.7 });
        assert_eq!(de(old), None);
        assert_eq!(de(serde_json::Value::Null), None);
    }

    #[test]
    fn unbounded_numbers_write_infinity_as_text_and_read_it_back() {
        for (x, text) in [(1.5, "1.5"), (f64::INFINITY, "\"inf\""), (f64::NEG_INFINITY, "\"-inf\"")] {
            assert_eq!(serde_json::to_string(&Unbounded(x)).unwrap(), text);
            assert_eq!(serde_json::from_str::<Unbounded>(text).unwrap(), Unbounded(x));
        }
        assert_eq!(serde_json::to_string(&Unbounded(f64::NAN)).unwrap(), "null");
        assert!(serde_json::from_str::<Unbounded>("null").unwrap().0.is_nan());
        assert!(serde_json::from_str::<Unbounded>("\"many\"").is_err());
    }
}
