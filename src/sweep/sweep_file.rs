//! The sweep file (TOML): a base case and the axes along which it is varied.
//!
//! ```toml
//! base = "tiny.toml"            # the base case, relative to this file
//! output = "../out/tiny"        # optional sweep folder, relative to this file [default: out/<file stem>]
//! combine = "product"           # product: every combination | zip: the i-th values of all axes together
//! seeds = 3                     # optional: replicate every point with cells.layout.seed = s, s+1, s+2
//!
//! [[axis]]
//! key = "flow.mean_velocity"    # any case key by its dotted path
//! values = ["0.5 um/s", "1 um/s", "2 um/s"]
//!
//! [[axis]]
//! key = "medium.permeability"
//! from = 1e-14                  # or "1e-14 m^2"
//! to = 1e-12
//! count = 3
//! scale = "log"                 # linear (default) | log
//! unit = "m^2"                  # the unit of bare numbers on this axis
//! ```

use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::axis::{range_values, AxisValue, Scale};
use super::error::SweepError;
use super::find_table::{FindSpec, RawFind};
use crate::case::bounded_read::{read_bounded, TEXT_INPUT_LIMIT};
use crate::case::units::parse_unit;

/// How the axes are combined into cases.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Combine {
    /// Every combination of the axes' values (the first axis varies slowest).
    Product,
    /// The i-th value of every axis together; all axes have the same length.
    Zip,
}

/// One axis: the dotted case key and its values.
#[derive(Clone, Debug)]
pub struct Axis {
    pub key: String,
    pub scale: Scale,
    pub values: Vec<AxisValue>,
    /// True for the replicate axis that `seeds = N` adds (`cells.layout.seed`): combined as a product with
    /// every point even under `zip`, and not drawn as a figure axis.
    pub replicate: bool,
}

/// A read and checked sweep file (the base case is read, not yet validated).
#[derive(Clone, Debug)]
pub struct SweepFile {
    /// The sweep file as given.
    pub path: PathBuf,
    /// The base case file (resolved against the sweep file's folder).
    pub base_path: PathBuf,
    /// The base case text.
    pub base_text: String,
    /// `output`, resolved against the sweep file's folder.
    pub output: Option<PathBuf>,
    pub combine: Combine,
    /// `seeds = N`, if given.
    pub seeds: Option<u64>,
    /// The axes in file order (without the replicate axis, which `expand` adds).
    pub axes: Vec<Axis>,
    /// `[find]`: search one axis for a crossing instead of running all its values.
    pub find: Option<FindSpec>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSweep {
    base: String,
    output: Option<String>,
    combine: Option<String>,
    seeds: Option<i64>,
    #[serde(default)]
    axis: Vec<RawAxis>,
    find: Option<RawFind>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawAxis {
    key: String,
    values: Option<Vec<toml::Value>>,
    from: Option<toml::Value>,
    to: Option<toml::Value>,
    count: Option<i64>,
    scale: Option<String>,
    unit: Option<String>,
}

impl SweepFile {
    /// Read a sweep file and its base case text.
    pub fn load(path: &Path) -> Result<SweepFile, SweepError> {
        let text = read_text(path, "sweep file")
            .map_err(|error| SweepError::Read { path: path.to_path_buf(), error })?;
        SweepFile::parse(&text, path)
    }

    /// Parse sweep text; `path` names the file in messages and anchors `base` and `output`.
    pub fn parse(text: &str, path: &Path) -> Result<SweepFile, SweepError> {
        let raw: RawSweep = toml::from_str(text).map_err(|e| SweepError::Syntax {
            path: path.to_path_buf(),
            message: format!("not a valid sweep file: {}", e.to_string().replace('\n', " ").trim()),
        })?;
        let folder = path.parent().unwrap_or(Path::new(""));
        let base_path = folder.join(&raw.base);
        let base_text = read_text(&base_path, "case file").map_err(|error| SweepError::Invalid {
            path: path.to_path_buf(),
            key: "base".into(),
            message: format!("cannot read the base case {}: {error}", base_path.display()),
        })?;
        let invalid = |key: &str, message: String| SweepError::Invalid {
            path: path.to_path_buf(),
            key: key.to_string(),
            message,
        };
        let combine = match raw.combine.as_deref() {
            None | Some("product") => Combine::Product,
            Some("zip") => Combine::Zip,
            Some(other) => return Err(invalid("combine", format!("\"{other}\" is not one of product, zip"))),
        };
        let seeds = match raw.seeds {
            None => None,
            Some(n) if n >= 1 && n as u64 > super::expand::MAX_CASES as u64 => {
                return Err(invalid(
                    "seeds",
                    format!(
                        "seeds = {n} is more than the {} cases a sweep may have",
                        super::expand::MAX_CASES
                    ),
                ))
            }
            Some(n) if n >= 1 => Some(n as u64),
            Some(n) => return Err(invalid("seeds", format!("seeds = {n} must be at least 1"))),
        };
        let searched = raw.find.as_ref().map(|f| f.axis.trim().to_string());
        let mut axes = Vec::with_capacity(raw.axis.len());
        for raw_axis in raw.axis {
            let key = raw_axis.key.clone();
            let is_searched = searched.as_deref() == Some(raw_axis.key.trim());
            let axis = build_axis(raw_axis, is_searched).map_err(|message| SweepError::Axis {
                path: path.to_path_buf(),
                key: key.clone(),
                message,
            })?;
            if axes.iter().any(|a: &Axis| a.key == axis.key) {
                return Err(SweepError::Axis {
                    path: path.to_path_buf(),
                    key,
                    message: "appears twice; give all its values in one axis".into(),
                });
            }
            axes.push(axis);
        }
        if seeds.is_some() && axes.iter().any(|a| a.key == "cells.layout.seed") {
            return Err(invalid(
                "seeds",
                "seeds = N and an axis on cells.layout.seed cannot both be given".into(),
            ));
        }
        let find = match raw.find {
            None => None,
            Some(raw_find) => {
                if axes.iter().any(|a| a.key == super::expand::SEED_KEY) {
                    return Err(invalid(
                        "find",
                        "a search takes its replicates from seeds = N, not from an axis on cells.layout.seed"
                            .into(),
                    ));
                }
                Some(FindSpec::check(raw_find, &axes).map_err(|(key, message)| invalid(&key, message))?)
            }
        };
        Ok(SweepFile {
            find,
            path: path.to_path_buf(),
            base_path,
            base_text,
            output: raw.output.map(|o| folder.join(o)),
            combine,
            seeds,
            axes,
        })
    }
}

/// A text input within [`TEXT_INPUT_LIMIT`], refusing pipes and devices.
fn read_text(path: &Path, what: &'static str) -> std::io::Result<String> {
    let bytes = read_bounded(path, TEXT_INPUT_LIMIT, what)?;
    String::from_utf8(bytes).map_err(|_| std::io::Error::other("the file is not UTF-8 text"))
}

/// `searched`: the axis of `[find]`, whose `from` and `to` need no `count` (they only bracket the search).
fn build_axis(raw: RawAxis, searched: bool) -> Result<Axis, String> {
    let key = raw.key.trim().to_string();
    if key.is_empty() || key.split('.').any(str::is_empty) {
        return Err("is not a dotted case key such as flow.mean_velocity".into());
    }
    let scale = match raw.scale.as_deref() {
        None | Some("linear") => Scale::Linear,
        Some("log") => Scale::Log,
        Some(other) => return Err(format!("scale = \"{other}\" is not one of linear, log")),
    };
    let unit = raw.unit.as_deref();
    if let Some(unit) = unit {
        parse_unit(unit).map_err(|e| format!("unit = {unit:?}: the unit {e}"))?;
    }
    let values = match (raw.values, raw.from, raw.to, raw.count) {
        (Some(list), None, None, None) => {
            if list.is_empty() {
                return Err("values = [] is empty".into());
            }
            let values =
                list.iter().map(|v| AxisValue::from_toml(v, unit)).collect::<Result<Vec<_>, String>>()?;
            if scale == Scale::Log {
                if let Some(bad) = values.iter().find(|v| !matches!(v.si, Some(x) if x > 0.0)) {
                    return Err(format!("scale = \"log\" needs positive numbers, but {} is not", bad.text));
                }
            }
            values
        }
        (None, Some(from), Some(to), Some(count)) => range_values(&from, &to, count, scale, unit)?,
        (None, Some(from), Some(to), None) if searched => range_values(&from, &to, 2, scale, unit)?,
        (Some(_), ..) => return Err("give either values = [...] or from, to and count, not both".into()),
        (None, ..) => return Err("needs values = [...] or a range with from, to and count".into()),
    };
    Ok(Axis { key, scale, values, replicate: false })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn with_base(sweep: &str) -> (tempfile::TempDir, Result<SweepFile, SweepError>) {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("base.toml"), "title = \"b\"\n").unwrap();
        let path = dir.path().join("s.toml");
        let parsed = SweepFile::parse(sweep, &path);
        (dir, parsed)
    }

    #[test]
    fn reads_lists_ranges_and_top_level_keys() {
        let (_dir, s) = with_base(
            "base = \"base.toml\"\ncombine = \"zip\"\nseeds = 2\n\
             [[axis]]\nkey = \"flow.mean_velocity\"\nvalues = [0.5, 1]\nunit = \"um/s\"\n\
             [[axis]]\nkey = \"medium.permeability\"\nfrom = \"1e-14 m^2\"\nto = \"1e-13 m^2\"\ncount = 2\nscale = \"log\"\n",
        );
        let s = s.unwrap();
        assert_eq!(s.combine, Combine::Zip);
        assert_eq!(s.seeds, Some(2));
        assert_eq!(s.axes.len(), 2);
        assert_eq!(s.axes[0].values[1].si, Some(1e-6));
        assert_eq!(s.axes[1].scale, Scale::Log);
        assert_eq!(s.base_text, "title = \"b\"\n");
    }

    fn axis_error(sweep: &str) -> String {
        let (_dir, s) = with_base(sweep);
        match s {
            Err(e @ SweepError::Axis { .. }) => e.to_string(),
            other => panic!("expected an axis error, got {other:?}"),
        }
    }

    #[test]
    fn axis_errors_name_the_axis() {
        let e = axis_error("base = \"base.toml\"\n[[axis]]\nkey = \"flow.mean_velocity\"\nvalues = []\n");
        assert!(e.contains("axis flow.mean_velocity: values = [] is empty"), "{e}");
        let e = axis_error(
            "base = \"base.toml\"\n[[axis]]\nkey = \"cells.radius\"\nvalues = [1]\nunit = \"cubits\"\n",
        );
        assert!(e.contains("axis cells.radius:") && e.contains("unknown unit"), "{e}");
        let e = axis_error(
            "base = \"base.toml\"\n[[axis]]\nkey = \"cells.radius\"\nfrom = \"5 um\"\nto = \"2 h\"\ncount = 2\n",
        );
        assert!(e.contains("axis cells.radius:") && e.contains("same kind"), "{e}");
        let e = axis_error("base = \"base.toml\"\n[[axis]]\nkey = \"a..b\"\nvalues = [1]\n");
        assert!(e.contains("axis a..b:"), "{e}");
    }

    #[test]
    fn top_level_errors_name_the_key() {
        let (_d, s) = with_base("base = \"base.toml\"\ncombine = \"cross\"\n");
        assert!(s.unwrap_err().to_string().contains("combine: \"cross\""));
        let (_d, s) = with_base("base = \"missing.toml\"\n");
        assert!(s.unwrap_err().to_string().contains("base: cannot read the base case"));
        let (_d, s) = with_base("base = \"base.toml\"\nrepeats = 2\n");
        assert!(s.unwrap_err().to_string().contains("repeats"));
    }
}
