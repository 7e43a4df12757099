//! Expansion of a sweep into cases: combine the axes (product or zip, replicate seeds innermost), put each
//! combination into the parsed TOML of the base case by its dotted keys, and write the case text back out.
//! Each case text then goes through the normal case path (`Case::parse`), so a swept case is validated exactly
//! like a case file written by hand, and its SHA-256 is the hash `run` records in `summary.json`.

use std::path::PathBuf;

use super::axis::{AxisValue, Scale};
use super::error::SweepError;
use super::sweep_file::{Axis, Combine, SweepFile};
use crate::case::{Case, CaseError};
use numkit::sha256_hex;

/// More cases than this is almost certainly a mistake in the sweep file.
pub const MAX_CASES: usize = 100_000;

/// The key that `seeds = N` varies.
pub const SEED_KEY: &str = "cells.layout.seed";

/// One case of a sweep.
#[derive(Clone, Debug)]
pub struct PlannedCase {
    /// Position in the expansion; also the Slurm array task id.
    pub index: usize,
    /// `case-0007`: the folder name under `DIR/cases/`.
    pub id: String,
    /// The value of every axis (in axis order) for this case.
    pub values: Vec<AxisValue>,
    /// The case file text.
    pub text: String,
    /// SHA-256 of `text` (what `run` writes as `case_sha256`).
    pub sha256: String,
}

/// An expanded sweep.
#[derive(Clone, Debug)]
pub struct Plan {
    pub sweep: SweepFile,
    /// All axes, the replicate axis (if any) last.
    pub axes: Vec<Axis>,
    pub cases: Vec<PlannedCase>,
    /// The base case as a TOML table, into which each case's values are put.
    base: toml::Table,
}

/// `case-<12 hex digits>`: the SHA-256 of the lines `key = value` of a case's axis values.
pub fn stable_id(axes: &[Axis], values: &[AxisValue]) -> String {
    let text: String =
        axes.iter().zip(values).map(|(axis, value)| format!("{} = {}\n", axis.key, value.text)).collect();
    format!("case-{}", &sha256_hex(text.as_bytes())[..12])
}

impl Plan {
    /// Expand `sweep` into case texts (cheap: nothing is validated or generated yet; see [`Plan::parse_case`]).
    pub fn expand(sweep: SweepFile) -> Result<Plan, SweepError> {
        let base: toml::Table = toml::from_str(&sweep.base_text).map_err(|e| SweepError::Base {
            path: sweep.path.clone(),
            source: Box::new(CaseError::Syntax {
                path: sweep.base_path.clone(),
                key: None,
                line: None,
                message: format!("invalid TOML: {}", e.message().trim()),
            }),
        })?;
        let mut axes = sweep.axes.clone();
        if let Some(n) = sweep.seeds {
            let base_seed = seed_of(&base).map_err(|message| SweepError::Invalid {
                path: sweep.path.clone(),
                key: "seeds".into(),
                message,
            })?;
            let values = (0..n)
                .map(|r| AxisValue::from_toml(&toml::Value::Integer((base_seed + r) as i64), None))
                .collect::<Result<Vec<_>, String>>()
                .map_err(|message| SweepError::Invalid {
                    path: sweep.path.clone(),
                    key: "seeds".into(),
                    message,
                })?;
            axes.push(Axis { key: SEED_KEY.into(), scale: Scale::Linear, values, replicate: true });
        }
        let mut plan = Plan { sweep, axes, cases: Vec::new(), base };
        if plan.sweep.find.is_some() {
            // A search adds its cases round by round (`push_case`).
            return Ok(plan);
        }
        let combinations = combine(&plan.sweep, &plan.axes)?;
        let width = combinations.len().saturating_sub(1).to_string().len().max(4);
        plan.cases.reserve(combinations.len());
        for (index, picks) in combinations.into_iter().enumerate() {
            let values: Vec<AxisValue> =
                plan.axes.iter().zip(&picks).map(|(axis, &pick)| axis.values[pick].clone()).collect();
            let case = plan.make_case(index, format!("case-{index:0width$}"), values)?;
            plan.cases.push(case);
        }
        Ok(plan)
    }

    /// The case with these axis values (in axis order) put into the base case.
    fn make_case(&self, index: usize, id: String, values: Vec<AxisValue>) -> Result<PlannedCase, SweepError> {
        let mut table = self.base.clone();
        for (axis, value) in self.axes.iter().zip(&values) {
            set_dotted(&mut table, &axis.key, value.toml.clone()).map_err(|message| SweepError::Axis {
                path: self.sweep.path.clone(),
                key: axis.key.clone(),
                message,
            })?;
        }
        let text = toml::to_string(&table).map_err(|e| SweepError::Syntax {
            path: self.sweep.path.clone(),
            message: format!("cannot write case {id} as TOML: {e}"),
        })?;
        let sha256 = sha256_hex(text.as_bytes());
        Ok(PlannedCase { index, id, values, text, sha256 })
    }

    /// Add the case with these axis values (in axis order) unless the plan has it; its index. Its id is derived
    /// from the values (`case-` and 12 hex digits of their SHA-256), so it never depends on when it was added.
    pub fn push_case(&mut self, values: Vec<AxisValue>) -> Result<usize, SweepError> {
        let id = stable_id(&self.axes, &values);
        if let Some(k) = self.cases.iter().position(|c| c.id == id) {
            return Ok(k);
        }
        let case = self.make_case(self.cases.len(), id, values)?;
        self.cases.push(case);
        Ok(self.cases.len() - 1)
    }

    /// Validate the base case alone (so that its own mistakes are reported as such, not as an axis's).
    pub fn parse_base(&self) -> Result<Case, SweepError> {
        Case::parse(&self.sweep.base_text, &self.sweep.base_path)
            .map_err(|e| SweepError::Base { path: self.sweep.path.clone(), source: Box::new(e) })
    }

    /// Validate case `index` through the normal case path; an error names the axis whose key it is about.
    pub fn parse_case(&self, index: usize) -> Result<Case, SweepError> {
        let planned = &self.cases[index];
        // Relative paths inside the case (layout files) stay relative to the base case's folder.
        Case::parse(&planned.text, &self.sweep.base_path).map_err(|error| {
            let key = error.key().unwrap_or("").to_string();
            let blamed = self.axes.iter().zip(&planned.values).find(|(axis, _)| {
                !key.is_empty()
                    && (key == axis.key
                        || key.starts_with(&format!("{}.", axis.key))
                        || axis.key.starts_with(&format!("{key}.")))
            });
            match blamed {
                Some((axis, value)) => SweepError::AxisCase {
                    path: self.sweep.path.clone(),
                    key: axis.key.clone(),
                    value: value.text.clone(),
                    id: planned.id.clone(),
                    source: Box::new(error),
                },
                None => SweepError::Case {
                    path: self.sweep.path.clone(),
                    id: planned.id.clone(),
                    parameters: self.describe(index),
                    source: Box::new(error),
                },
            }
        })
    }

    /// `flow.mean_velocity = "1 um/s", cells.layout.seed = 8` for case `index`.
    pub fn describe(&self, index: usize) -> String {
        self.axes
            .iter()
            .zip(&self.cases[index].values)
            .map(|(axis, value)| format!("{} = {}", axis.key, value.text))
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// The case folder `DIR/cases/<id>`.
    pub fn case_dir(&self, dir: &std::path::Path, index: usize) -> PathBuf {
        dir.join("cases").join(&self.cases[index].id)
    }
}

/// The seed of the base case's random layout (the case file's default, 1, when absent).
fn seed_of(base: &toml::Table) -> Result<u64, String> {
    let layout = base.get("cells").and_then(|c| c.get("layout")).and_then(|l| l.as_table());
    let kind = layout.and_then(|l| l.get("kind")).and_then(|k| k.as_str());
    if kind != Some("random") {
        return Err("seeds = N replicates random layouts, but the base case has no cells.layout with kind = \"random\"".into());
    }
    match layout.and_then(|l| l.get("seed")) {
        None => Ok(1),
        Some(toml::Value::Integer(s)) if *s >= 0 => Ok(*s as u64),
        Some(other) => Err(format!("the base case's cells.layout.seed = {other} is not a whole number")),
    }
}

/// The value index of every axis for every case: product (first axis slowest) or zip, replicates innermost.
pub fn combine(sweep: &SweepFile, axes: &[Axis]) -> Result<Vec<Vec<usize>>, SweepError> {
    let points: Vec<&Axis> = axes.iter().filter(|a| !a.replicate).collect();
    let mut combos: Vec<Vec<usize>> = vec![Vec::new()];
    match sweep.combine {
        Combine::Zip if !points.is_empty() => {
            let n = points[0].values.len();
            if let Some(bad) = points.iter().find(|a| a.values.len() != n) {
                return Err(SweepError::Axis {
                    path: sweep.path.clone(),
                    key: bad.key.clone(),
                    message: format!(
                        "has {} values but axis {} has {n}; combine = \"zip\" needs equal lengths",
                        bad.values.len(),
                        points[0].key
                    ),
                });
            }
            combos = (0..n).map(|i| vec![i; points.len()]).collect();
        }
        _ => {
            for axis in &points {
                combos = expand_product(combos, axis.values.len(), sweep)?;
            }
        }
    }
    for axis in axes.iter().filter(|a| a.replicate) {
        combos = expand_product(combos, axis.values.len(), sweep)?;
    }
    Ok(combos)
}

fn expand_product(
    combos: Vec<Vec<usize>>,
    n: usize,
    sweep: &SweepFile,
) -> Result<Vec<Vec<usize>>, SweepError> {
    if combos.len().saturating_mul(n) > MAX_CASES {
        return Err(SweepError::Invalid {
            path: sweep.path.clone(),
            key: "axis".into(),
            message: format!("the axes give more than {MAX_CASES} cases"),
        });
    }
    Ok(combos
        .into_iter()
        .flat_map(|c| {
            (0..n).map(move |i| {
                let mut c = c.clone();
                c.push(i);
                c
            })
        })
        .collect())
}

/// Put `value` at the dotted `key` of `table`, creating missing tables on the way; a numeric part indexes an
/// array (`chamber.size.0`). Whether the key means anything is left to the case parser.
pub fn set_dotted(table: &mut toml::Table, key: &str, value: toml::Value) -> Result<(), String> {
    let parts: Vec<&str> = key.split('.').collect();
    let (last, walk) = parts.split_last().ok_or("is empty")?;
    let mut here = table;
    let mut so_far = String::new();
    for part in walk {
        so_far = if so_far.is_empty() { part.to_string() } else { format!("{so_far}.{part}") };
        let next = here.entry(part.to_string()).or_insert_with(|| toml::Value::Table(toml::Table::new()));
        match next {
            toml::Value::Table(t) => here = t,
            toml::Value::Array(items) => {
                return set_in_array(items, &parts[so_far.split('.').count()..], value, &so_far);
            }
            other => return Err(format!("{so_far} is {}, not a table, in the base case", kind(other))),
        }
    }
    here.insert(last.to_string(), value);
    Ok(())
}

fn set_in_array(
    items: &mut [toml::Value],
    rest: &[&str],
    value: toml::Value,
    so_far: &str,
) -> Result<(), String> {
    let (first, rest) = rest.split_first().ok_or("is empty")?;
    let index: usize = first.parse().map_err(|_| format!("{so_far} is an array; index it with a number"))?;
    let len = items.len();
    let slot = items
        .get_mut(index)
        .ok_or_else(|| format!("{so_far} has {len} items, so .{index} does not exist"))?;
    if rest.is_empty() {
        *slot = value;
        return Ok(());
    }
    match slot {
        toml::Value::Table(t) => set_dotted(t, &rest.join("."), value),
        toml::Value::Array(a) => set_in_array(a, rest, value, &format!("{so_far}.{index}")),
        other => Err(format!("{so_far}.{index} is {}, not a table", kind(other))),
    }
}

fn kind(value: &toml::Value) -> &'static str {
    match value {
        toml::Value::String(_) => "a string",
        toml::Value::Integer(_) | toml::Value::Float(_) => "a number",
        toml::Value::Boolean(_) => "a boolean",
        toml::Value::Datetime(_) => "a date",
        toml::Value::Array(_) => "an array",
        toml::Value::Table(_) => "a table",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const BASE: &str = r#"
title = "tiny"
[chamber]
size = ["60 um", "40 um", "40 um"]
[grid]
spacing = "2.5 um"
[medium]
model = "darcy"
viscosity = "1e-3 Pa s"
permeability = "1e-13 m^2"
[flow]
mean_velocity = "1 um/s"
[boundaries]
x_min = "inlet"
x_max = "outlet"
y_min = "wall"
y_max = "wall"
z_min = "symmetry"
z_max = "symmetry"
[ligand]
diffusivity = "1e-10 m^2/s"
[cells]
radius = "8 um"
secretion_rate = "2000 /h"
layout = { kind = "random", count = 2, min_gap = "2 um", seed = 7 }
"#;

    fn plan(sweep: &str) -> Result<Plan, SweepError> {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("base.toml"), BASE).unwrap();
        let path = dir.path().join("s.toml");
        Plan::expand(SweepFile::parse(&format!("base = \"base.toml\"\n{sweep}"), &path)?)
    }

    #[test]
    fn product_with_seeds_varies_first_axis_slowest_and_seeds_fastest() {
        let p = plan(
            "seeds = 2\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [\"1 um/s\", \"2 um/s\"]\n\
             [[axis]]\nkey = \"ligand.decay_rate\"\nvalues = [\"0 /s\", \"1e-4 /s\", \"1e-3 /s\"]\n",
        )
        .unwrap();
        assert_eq!(p.cases.len(), 12);
        assert_eq!(p.cases[0].id, "case-0000");
        assert_eq!(
            p.describe(1),
            "flow.mean_velocity = \"1 um/s\", ligand.decay_rate = \"0 /s\", cells.layout.seed = 8"
        );
        assert_eq!(
            p.describe(11),
            "flow.mean_velocity = \"2 um/s\", ligand.decay_rate = \"1e-3 /s\", cells.layout.seed = 8"
        );
        let case = p.parse_case(11).unwrap();
        assert_eq!(case.flow.mean_velocity, 2e-6);
        assert_eq!(case.ligand.decay_rate, 1e-3);
        assert_eq!(case.sha256, p.cases[11].sha256);
        // Distinct cases, distinct hashes.
        let mut hashes: Vec<_> = p.cases.iter().map(|c| c.sha256.clone()).collect();
        hashes.sort();
        hashes.dedup();
        assert_eq!(hashes.len(), 12);
    }

    #[test]
    fn zip_pairs_values_and_checks_lengths() {
        let p = plan(
            "combine = \"zip\"\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [1, 2]\nunit = \"um/s\"\n\
             [[axis]]\nkey = \"cells.radius\"\nvalues = [\"6 um\", \"7 um\"]\n",
        )
        .unwrap();
        assert_eq!(p.cases.len(), 2);
        let case = p.parse_case(1).unwrap();
        assert_eq!((case.flow.mean_velocity, case.cell_radius), (2e-6, 7e-6));
        let e = plan(
            "combine = \"zip\"\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [1, 2]\nunit = \"um/s\"\n\
             [[axis]]\nkey = \"cells.radius\"\nvalues = [\"6 um\"]\n",
        )
        .unwrap_err();
        assert!(
            e.to_string().contains("axis cells.radius: has 1 values but axis flow.mean_velocity has 2"),
            "{e}"
        );
    }

    #[test]
    fn unknown_key_and_wrong_unit_are_blamed_on_the_axis() {
        let p = plan("[[axis]]\nkey = \"flow.mean_speed\"\nvalues = [\"1 um/s\"]\n").unwrap();
        let e = p.parse_case(0).unwrap_err();
        assert!(matches!(e, SweepError::AxisCase { ref key, .. } if key == "flow.mean_speed"), "{e}");
        let p = plan("[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [\"3 s\"]\n").unwrap();
        let e = crate::exit::one_line(&anyhow::Error::new(p.parse_case(0).unwrap_err()));
        assert!(
            e.contains("axis flow.mean_velocity = \"3 s\" (case case-0000)") && e.contains("velocity"),
            "{e}"
        );
        let e = plan("[[axis]]\nkey = \"flow.mean_velocity.x\"\nvalues = [1]\n").unwrap_err();
        assert!(e.to_string().contains("axis flow.mean_velocity.x: flow.mean_velocity is a string"), "{e}");
    }

    #[test]
    fn array_items_by_index_and_seeds_need_a_random_layout() {
        let p = plan("[[axis]]\nkey = \"chamber.size.0\"\nvalues = [\"80 um\"]\n").unwrap();
        assert_eq!(p.parse_case(0).unwrap().chamber_size[0], 8e-5);
        let mut t: toml::Table = toml::from_str("[cells]\nlist = []\n").unwrap();
        assert!(seed_of(&t).is_err());
        set_dotted(&mut t, "cells.layout.kind", toml::Value::String("random".into())).unwrap();
        assert_eq!(seed_of(&t), Ok(1));
    }

    #[test]
    fn no_axes_is_the_base_case_alone() {
        let p = plan("").unwrap();
        assert_eq!(p.cases.len(), 1);
        assert_eq!(p.parse_case(0).unwrap().title, "tiny");
    }
}
