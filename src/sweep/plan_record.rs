//! `DIR/sweep_plan.json`: what `collect` needs to know about a sweep without the sweep file — the axes
//! (key, scale, SI unit), every case's id, hash and axis values, and for a crossing search its `[find]`
//! settings (absent for a plain sweep, and in plan files written before they were kept). Written by `sweep` (all modes) before any
//! case runs, atomically, and only when its content changes.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::axis::{si_unit_label, Scale};
use super::crossing_rounds::search_params;
use super::expand::Plan;
use super::sweep_file::Combine;
use crate::io::write_atomic;
use crate::sensing::crossing_search::SearchParams;

/// File name of the plan record in the sweep folder.
pub const PLAN_FILE: &str = "sweep_plan.json";

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AxisRecord {
    pub key: String,
    pub scale: Scale,
    /// SI unit of the values' `si`, when every value is a quantity of one kind.
    pub unit: Option<String>,
    /// True for the replicate-seed axis.
    pub replicate: bool,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ValueRecord {
    /// As written in the case.
    pub text: String,
    /// In SI units, when a quantity.
    pub si: Option<f64>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CaseRecord {
    pub id: String,
    pub sha256: String,
    pub values: Vec<ValueRecord>,
}

/// The `[find]` table of a crossing search, resolved: what `collect` needs to replay its decisions.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FindRecord {
    pub metric: String,
    /// The searched axis: its key and position among `axes`.
    pub axis: String,
    pub axis_index: usize,
    /// The level, the ends (SI) and the budget of the search, as it ran.
    #[serde(flatten)]
    pub search: SearchParams,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PlanRecord {
    pub sweep_file: PathBuf,
    pub base_case: PathBuf,
    pub combine: Combine,
    pub axes: Vec<AxisRecord>,
    pub cases: Vec<CaseRecord>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub find: Option<FindRecord>,
}

impl PlanRecord {
    pub fn of(plan: &Plan) -> PlanRecord {
        let axes = plan
            .axes
            .iter()
            .map(|axis| {
                let first = axis.values.first().and_then(|v| v.dimension);
                let same = axis.values.iter().all(|v| v.si.is_some() && v.dimension == first);
                AxisRecord {
                    key: axis.key.clone(),
                    scale: axis.scale,
                    unit: first.filter(|_| same).map(si_unit_label),
                    replicate: axis.replicate,
                }
            })
            .collect();
        let cases = plan
            .cases
            .iter()
            .map(|c| CaseRecord {
                id: c.id.clone(),
                sha256: c.sha256.clone(),
                values: c.values.iter().map(|v| ValueRecord { text: v.text.clone(), si: v.si }).collect(),
            })
            .collect();
        let find = plan.sweep.find.as_ref().map(|f| FindRecord {
            metric: f.metric.clone(),
            axis: f.axis.clone(),
            axis_index: f.axis_index,
            search: search_params(plan, f),
        });
        PlanRecord {
            sweep_file: absolute(&plan.sweep.path),
            base_case: absolute(&plan.sweep.base_path),
            combine: plan.sweep.combine,
            axes,
            cases,
            find,
        }
    }

    /// Write `DIR/sweep_plan.json` (creating DIR) unless it already holds this very record.
    pub fn write(&self, dir: &Path) -> std::io::Result<()> {
        std::fs::create_dir_all(dir)?;
        let text = serde_json::to_vec_pretty(self).map_err(std::io::Error::other)?;
        let path = dir.join(PLAN_FILE);
        if std::fs::read(&path).ok().as_deref() == Some(&text[..]) {
            return Ok(());
        }
        write_atomic(&path, &text)
    }

    /// Read `DIR/sweep_plan.json`.
    pub fn read(dir: &Path) -> Result<PlanRecord, String> {
        let path = dir.join(PLAN_FILE);
        let bytes = std::fs::read(&path).map_err(|e| {
            format!("{} is not a sweep folder: cannot read {}: {e}", dir.display(), PLAN_FILE)
        })?;
        serde_json::from_slice(&bytes).map_err(|e| format!("{} is unreadable: {e}", path.display()))
    }
}

fn absolute(path: &Path) -> PathBuf {
    std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf())
}
