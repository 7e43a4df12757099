//! `sensing_by_position.csv`: the slabs along the flow of the run's sensing statistics, one row per slab.
//! Every header name carries its unit in brackets (`x_low [m]`, `failed_fraction [1]`); empty slabs have
//! `nan` quantiles and failed fraction.

use std::path::Path;

use anyhow::Context;

use super::atomic::write_atomic;
use super::number_text::format_real;
use crate::sensing::statistics::{SensingStatistics, Spread};

/// The CSV text; `units` gives the unit of each summarised quantity by name.
pub fn sensing_by_position_bytes(stats: &SensingStatistics, units: &dyn Fn(&str) -> String) -> Vec<u8> {
    let names: Vec<&String> =
        stats.by_position.first().map(|s| s.quantities.keys().collect()).unwrap_or_default();
    let mut header: Vec<String> = [
        "slab [1]",
        "x_low [m]",
        "x_high [m]",
        "cells [1]",
        "failed [1]",
        "failed_fraction [1]",
        "estimated_failed_fraction [1]",
    ]
    .map(String::from)
    .to_vec();
    let spread_header =
        |name: &str, unit: &str| ["p10", "median", "p90"].map(|s| format!("{name}_{s} [{unit}]"));
    header.extend(spread_header("direction_error", "1"));
    for name in &names {
        header.extend(spread_header(name, &units(name)));
    }
    let spread = |s: &Spread| [s.p10, s.median, s.p90].map(format_real);
    let mut text = header.join(",") + "\n";
    for slab in &stats.by_position {
        let mut row = vec![
            slab.index.to_string(),
            format_real(slab.x_low),
            format_real(slab.x_high),
            slab.cells.to_string(),
            slab.failed.to_string(),
            format_real(slab.failed_fraction),
            format_real(slab.estimated_failed_fraction),
        ];
        row.extend(spread(&slab.direction_error));
        for name in &names {
            row.extend(spread(&slab.quantities[*name]));
        }
        text += &(row.join(",") + "\n");
    }
    text.into_bytes()
}

/// Writes `DIR/sensing_by_position.csv` atomically.
pub fn write_sensing_by_position(
    path: &Path,
    stats: &SensingStatistics,
    units: &dyn Fn(&str) -> String,
) -> anyhow::Result<()> {
    write_atomic(path, &sensing_by_position_bytes(stats, units))
        .with_context(|| format!("cannot write {}", path.display()))
}
