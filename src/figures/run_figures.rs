//! The four figures of a run (DESIGN.md §6), drawn from its output folder into `<dir>/figures/`, and for a
//! transient run the approach to steady state.

use std::path::{Path, PathBuf};

use anyhow::Context;

use super::run_data::RunFigureData;
use super::{
    anisotropy_map, anisotropy_profile, approach_to_steady, concentration_slice, direction_error_histogram,
};

/// Draws every run figure of output folder `dir`; returns the files written. The slice is skipped when the run
/// did not write the concentration field.
pub fn draw_run_figures(dir: &Path) -> anyhow::Result<Vec<PathBuf>> {
    let data = RunFigureData::read(dir)?;
    let folder = dir.join("figures");
    std::fs::create_dir_all(&folder).with_context(|| format!("cannot create {}", folder.display()))?;
    let mut written = Vec::new();
    if data.plane.is_some() {
        let path = folder.join("concentration_slice.png");
        concentration_slice::draw(&data, &path)?;
        written.push(path);
    }
    type Draw = fn(&RunFigureData, &Path) -> anyhow::Result<()>;
    let figures: [(&str, Draw); 3] = [
        ("anisotropy_map.png", anisotropy_map::draw),
        ("anisotropy_profile.png", anisotropy_profile::draw),
        ("direction_error_histogram.png", direction_error_histogram::draw),
    ];
    for (name, draw) in figures {
        let path = folder.join(name);
        draw(&data, &path)?;
        written.push(path);
    }
    if approach_to_steady::is_transient(dir) {
        let path = folder.join("approach_to_steady.png");
        approach_to_steady::draw(dir, &path)?;
        written.push(path);
    }
    Ok(written)
}
