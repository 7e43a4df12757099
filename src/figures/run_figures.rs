//! The figures of one run (DESIGN.md §6), drawn from its output folder into `<dir>/figures/`, in parallel, and
//! for a transient run the approach to steady state and the readable fraction over time.

use std::path::{Path, PathBuf};

use anyhow::Context;
use rayon::prelude::*;

use super::run_data::RunFigureData;
use super::style::FigureRecord;
use super::{
    anisotropy_map, anisotropy_profile, approach_to_steady, concentration_slice, direction_error_histogram,
    self_and_neighbour_signal,
};

type Draw = fn(&RunFigureData, &Path) -> anyhow::Result<FigureRecord>;

/// Draws every run figure of output folder `dir`; returns the files written with what each shows. The slice is
/// skipped when the run did not write the concentration field, the own/neighbour signal when no cell was split.
pub fn draw_run_figures(dir: &Path) -> anyhow::Result<Vec<(PathBuf, FigureRecord)>> {
    let data = RunFigureData::read(dir)?;
    let folder = dir.join("figures");
    std::fs::create_dir_all(&folder).with_context(|| format!("cannot create {}", folder.display()))?;
    let mut figures: Vec<(&str, Draw)> = vec![
        ("anisotropy_map.png", anisotropy_map::draw),
        ("anisotropy_profile.png", anisotropy_profile::draw),
        ("direction_error_histogram.png", direction_error_histogram::draw),
    ];
    if self_and_neighbour_signal::has_split(&data) {
        figures.push(("self_and_neighbour_signal.png", self_and_neighbour_signal::draw));
    }
    if data.plane.is_some() {
        figures.insert(0, ("concentration_slice.png", concentration_slice::draw));
    }
    let transient = approach_to_steady::is_transient(dir);
    // Each figure rasterises on its own core (the slice, the largest, first).
    let mut drawn: Vec<(PathBuf, FigureRecord)> = figures
        .par_iter()
        .map(|(name, draw)| {
            let path = folder.join(name);
            let record = draw(&data, &path).with_context(|| format!("cannot draw {}", path.display()))?;
            Ok((path, record))
        })
        .collect::<anyhow::Result<_>>()?;
    if transient {
        drawn.extend(approach_to_steady::draw_all(dir, &folder, data.readable_error)?);
    }
    Ok(drawn)
}
