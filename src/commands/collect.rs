//! `plumefield collect DIR`: gather the cases of a sweep folder into `DIR/sweep.csv` and `DIR/sweep.h5`
//! (plus `DIR/timings.csv`), and draw each metric against each swept parameter into `DIR/figures/`; for a
//! crossing search also `DIR/crossing.csv` and `DIR/crossing.png`.

use std::path::Path;

use anyhow::Result;

use crate::sweep::collect::{collect, write_csv, write_h5, write_timings, ColumnData};
use crate::sweep::crossing_table::{write_crossing, CrossingRow, CROSSING_FILE};
use crate::sweep::replicate_groups::replicate_groups;
use crate::sweep::sweep_curves::draw_sweep_curves;

pub fn execute(dir: &Path) -> Result<()> {
    execute_with_crossing(dir).map(|_| ())
}

/// [`execute`], returning the crossing table's header and rows for a crossing search.
pub fn execute_with_crossing(dir: &Path) -> Result<Option<(Vec<String>, Vec<CrossingRow>)>> {
    let (table, plan, timings) = collect(dir)?;
    // The tables are written while the figures are drawn: a local sweep waits for both after its last case.
    let (written, figures) = rayon::join(
        || -> Result<()> {
            write_csv(&dir.join("sweep.csv"), &table)?;
            write_csv(&dir.join("sweep_groups.csv"), &replicate_groups(&table, &plan))?;
            write_h5(&dir.join("sweep.h5"), &table, &plan)?;
            write_timings(&dir.join("timings.csv"), &plan, &timings)
        },
        || draw_sweep_curves(&table, &plan, &dir.join("figures")),
    );
    written?;
    let figures = figures?;
    let crossing = write_crossing(dir, &plan, &table)?;
    let count = |what: &str| match table.column("status").map(|c| &c.data) {
        Some(ColumnData::Text(v)) => v.iter().filter(|s| *s == what).count(),
        _ => 0,
    };
    eprintln!(
        "collected {} cases ({} done, {} failed, {} not done) into {}, sweep_groups.csv and sweep.h5; {} figures in {}",
        table.rows,
        count("done"),
        count("failed"),
        count("not_done"),
        dir.join("sweep.csv").display(),
        figures.len(),
        dir.join("figures").display()
    );
    if crossing.is_some() {
        eprintln!("crossing search results in {} and crossing.png", dir.join(CROSSING_FILE).display());
    }
    Ok(crossing)
}
