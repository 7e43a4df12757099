//! The case file as written: TOML syntax, key names and value types, each value with its byte span so that
//! every later error can name its line. Nothing here is checked for physical sense; see `validate.rs`.
//!
//! Unknown keys are refused by serde (`deny_unknown_fields`); tagged choices (layout kinds, uptake models)
//! are plain structs with optional keys, because serde's internally tagged enums would lose the spans.

use serde::de::{self, Deserializer, Visitor};
use serde::Deserialize;
use toml::Spanned;

/// A dimensional value as written: a bare number (SI) or a string with a unit.
#[derive(Clone, Debug, PartialEq)]
pub enum RawNumber {
    Si(f64),
    Text(String),
}

impl<'de> Deserialize<'de> for RawNumber {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct NumberVisitor;
        impl Visitor<'_> for NumberVisitor {
            type Value = RawNumber;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                write!(f, "a number or a string with a unit such as \"10 um\"")
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<RawNumber, E> {
                Ok(RawNumber::Si(v))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawNumber, E> {
                Ok(RawNumber::Si(v as f64))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawNumber, E> {
                Ok(RawNumber::Si(v as f64))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawNumber, E> {
                Ok(RawNumber::Text(v.to_string()))
            }
        }
        deserializer.deserialize_any(NumberVisitor)
    }
}

impl std::fmt::Display for RawNumber {
    /// As it would be written in the case file (for error messages).
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RawNumber::Si(v) => write!(f, "{v}"),
            RawNumber::Text(t) => write!(f, "{t:?}"),
        }
    }
}

pub type Value<T> = Option<Spanned<T>>;

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCase {
    pub title: Value<String>,
    pub chamber: Option<Spanned<RawChamber>>,
    pub grid: Option<Spanned<RawGrid>>,
    pub medium: Option<Spanned<RawMedium>>,
    pub flow: Option<Spanned<RawFlow>>,
    pub boundaries: Option<Spanned<RawBoundaries>>,
    pub ligand: Option<Spanned<RawLigand>>,
    pub cells: Option<Spanned<RawCells>>,
    pub solve: Option<Spanned<RawSolve>>,
    pub sensing: Option<Spanned<RawSensing>>,
    pub output: Option<Spanned<RawOutput>>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawChamber {
    pub size: Value<Vec<Spanned<RawNumber>>>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawGrid {
    pub spacing: Value<RawNumber>,
    pub cells_per_radius: Value<RawNumber>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawMedium {
    pub model: Value<String>,
    pub viscosity: Value<RawNumber>,
    pub permeability: Value<RawNumber>,
    pub effective_viscosity: Value<RawNumber>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawFlow {
    pub mean_velocity: Value<RawNumber>,
    /// Transient: time of a flow step change, and the mean velocity after it.
    pub change_at: Value<RawNumber>,
    pub mean_velocity_after: Value<RawNumber>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawBoundaries {
    pub x_min: Value<String>,
    pub x_max: Value<String>,
    pub y_min: Value<String>,
    pub y_max: Value<String>,
    pub z_min: Value<String>,
    pub z_max: Value<String>,
    /// Which sources the far-field condition assumes: "cells" (default) or "centroid".
    pub far_field_sources: Value<String>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawLigand {
    pub diffusivity: Value<RawNumber>,
    pub decay_rate: Value<RawNumber>,
    pub inlet_concentration: Value<RawNumber>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCells {
    pub radius: Value<RawNumber>,
    pub secretion_rate: Value<RawNumber>,
    pub uptake: Option<Spanned<RawUptake>>,
    pub layout: Option<Spanned<RawLayout>>,
    pub list: Value<Vec<Spanned<RawCellEntry>>>,
    /// Transient: when every cell starts secreting (default 0).
    pub secretion_start: Value<RawNumber>,
}

/// `{ model = "none" | "first_order" | "absorbing", rate_constant = "<velocity>" }`
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawUptake {
    pub model: Value<String>,
    pub rate_constant: Value<RawNumber>,
}

/// One table for every layout kind; which keys a kind accepts is checked in validation.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawLayout {
    pub kind: Value<String>,
    pub count: Value<RawNumber>,
    pub volume_fraction: Value<RawNumber>,
    pub min_gap: Value<RawNumber>,
    pub seed: Value<u64>,
    pub spacing: Value<Vec<Spanned<RawNumber>>>,
    pub path: Value<String>,
    /// Cell-free lengths next to the inlet (x_min) and the outlet (x_max).
    pub inlet_margin: Value<RawNumber>,
    pub outlet_margin: Value<RawNumber>,
    /// Random and cluster layouts: hard-sphere Monte Carlo sweeps after placement.
    pub monte_carlo_sweeps: Value<RawNumber>,
    /// Cluster layouts: centre and semi-axes of the ellipsoid that holds the cell centres.
    pub centre: Value<Vec<Spanned<RawNumber>>>,
    pub semi_axes: Value<Vec<Spanned<RawNumber>>>,
}

/// One `[[cells.list]]` entry.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCellEntry {
    pub x: Value<RawNumber>,
    pub y: Value<RawNumber>,
    pub z: Value<RawNumber>,
    pub radius: Value<RawNumber>,
    pub secretion_rate: Value<RawNumber>,
    /// Transient: when this cell starts secreting.
    pub secretion_start: Value<RawNumber>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSolve {
    pub mode: Value<String>,
    pub tolerance: Value<RawNumber>,
    pub max_iterations: Value<RawNumber>,
    pub end_time: Value<RawNumber>,
    pub time_step: Value<RawNumber>,
    pub output_every: Value<RawNumber>,
    /// A list of times, or `{ from, to, count, scale }`.
    pub output_times: Value<toml::Value>,
    pub adaptive: Value<bool>,
    pub error_tolerance: Value<RawNumber>,
    pub initial_condition: Value<String>,
    pub stop_at_steady: Value<bool>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSensing {
    pub integration_time: Value<RawNumber>,
    /// Self/neighbour split: "all", "none", "sample:N" or a list of cell ids.
    pub decompose: Value<toml::Value>,
    /// Transient: cumulative counts start here.
    pub window_start: Value<RawNumber>,
    pub readable_error: Value<RawNumber>,
    pub position_bins: Value<RawNumber>,
    pub statistics_margin: Value<RawNumber>,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawOutput {
    pub fields: Value<Vec<Spanned<String>>>,
    pub figures: Value<bool>,
    pub precision: Value<String>,
    pub compression: Value<RawNumber>,
}
