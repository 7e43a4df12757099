//! `plumefield plot DIR`: redraws the figures of a run from its output folder (the same code `run` uses).

use std::path::Path;

/// Draws `DIR/figures/*.png` and lists them.
pub fn execute(dir: &Path) -> anyhow::Result<()> {
    for (path, _) in crate::figures::run_figures::draw_run_figures(dir)? {
        println!("wrote {}", path.display());
    }
    Ok(())
}
