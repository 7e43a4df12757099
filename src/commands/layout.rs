//! `plumefield layout CASE [-o cells.csv]`: generate and check the layout of a case without solving anything;
//! print its density and spacing statistics, and write it as CSV (the layout part of `cells.csv`, so the
//! file can be fed back through `layout = { kind = "file", ... }`).

use std::fmt::Write as _;
use std::path::Path;

use anyhow::Context;

use crate::case::Case;
use crate::io::cells_csv::write_cells_csv;
use crate::io::table::{CellTable, Column};

/// The layout columns of `cells.csv`: id,x,y,z,radius,secretion_rate (SI).
pub fn layout_table(layout: &mesh::Layout) -> CellTable {
    let cells = &layout.cells;
    let real = |name: &str, unit: &str, description: &str, f: &dyn Fn(&mesh::Cell) -> f64| {
        Column::real(name, unit, description, cells.iter().map(f).collect())
    };
    CellTable {
        columns: vec![
            Column::int(
                "id",
                "1",
                "cell identifier (row order of the layout)",
                cells.iter().map(|c| c.id as u64).collect(),
            ),
            real("x", "m", "centre x", &|c| c.centre[0]),
            real("y", "m", "centre y", &|c| c.centre[1]),
            real("z", "m", "centre z", &|c| c.centre[2]),
            real("radius", "m", "cell radius", &|c| c.radius),
            real("secretion_rate", "molecules/s", "ligand secreted by the cell", &|c| c.secretion_rate),
        ],
    }
}

/// The statistics block printed by `layout` (and reusable by reports).
pub fn describe_layout(case: &Case) -> String {
    let chamber = mesh::layout::ChamberBox {
        lower: [0.0; 3],
        upper: case.chamber_size,
        periodic: case.boundaries.periodic_axes(),
    };
    let stats = case.layout.statistics(&chamber);
    let mut text = String::new();
    let um = |metres: f64| {
        let text = format!("{:.4}", metres * 1e6);
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    };
    let size_um = case.chamber_size.map(um);
    let _ = writeln!(text, "case:            {} ({})", case.title, case.source_path.display());
    let _ = writeln!(
        text,
        "chamber:         {} x {} x {} um, grid {} x {} x {} cells of {} um",
        size_um[0],
        size_um[1],
        size_um[2],
        case.grid.shape[0],
        case.grid.shape[1],
        case.grid.shape[2],
        um(case.grid.spacing)
    );
    let _ = writeln!(text, "layout:          {}", case.layout_kind);
    let _ = writeln!(text, "cells:           {}", stats.count);
    let _ = writeln!(text, "volume fraction: {:.4}", stats.volume_fraction);
    let _ = writeln!(
        text,
        "number density:  {:.4e} per mL ({:.4e} per m^3)",
        stats.number_density * 1e-6,
        stats.number_density
    );
    if stats.nearest_neighbour_quantiles.is_empty() {
        let _ = writeln!(text, "nearest-neighbour distance: (fewer than two cells)");
    } else {
        let quantiles: Vec<String> = stats
            .nearest_neighbour_quantiles
            .iter()
            .map(|(q, d)| format!("q{:.0}% {:.2}", q * 100.0, d * 1e6))
            .collect();
        let _ = writeln!(text, "nearest-neighbour centre distance (um): {}", quantiles.join(", "));
        let gaps: Vec<String> = stats
            .nearest_gap_quantiles
            .iter()
            .map(|(q, d)| {
                if *q == 0.0 {
                    format!("min {:.3}", d * 1e6)
                } else {
                    format!("q{:.0}% {:.3}", q * 100.0, d * 1e6)
                }
            })
            .collect();
        let _ = writeln!(text, "nearest surface gap (um): {}", gaps.join(", "));
    }
    for warning in &case.warnings {
        let _ = writeln!(text, "warning: {warning}");
    }
    text
}

/// Load `case_path`, print the layout statistics on stdout and write the layout to `csv_path` atomically.
pub fn execute(case_path: &Path, csv_path: &Path) -> anyhow::Result<()> {
    let case = Case::load(case_path)?;
    print!("{}", describe_layout(&case));
    if let Some(folder) = csv_path.parent().filter(|p| !p.as_os_str().is_empty()) {
        std::fs::create_dir_all(folder)
            .with_context(|| format!("cannot create folder {}", folder.display()))?;
    }
    write_cells_csv(csv_path, &layout_table(&case.layout))?;
    println!("wrote {} ({} cells)", csv_path.display(), case.layout.cells.len());
    Ok(())
}
