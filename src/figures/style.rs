//! What every figure shares: the font (DejaVu Sans, embedded, so no system fonts are needed), the colour map
//! (viridis: perceptually uniform and readable in grey and by colour-blind readers; van der Walt & Smith's
//! matplotlib default, common practice), sizes, and the atomic PNG write.

use std::path::Path;
use std::sync::Once;

use anyhow::{anyhow, Context};
use plotters::style::colors::colormaps::ViridisRGB;
use plotters::style::{FontStyle, RGBColor};

/// Font family name registered for all figure text.
pub const FONT: &str = "sans-serif";

/// Registers the embedded DejaVu Sans once per process (plotters' ab_glyph backend has no system fonts).
pub fn register_fonts() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        let _ = plotters::style::register_font(FONT, FontStyle::Normal, dejavu::sans::regular());
        let _ = plotters::style::register_font(FONT, FontStyle::Bold, dejavu::sans::bold());
    });
}

/// Viridis colour of `t` in [0, 1] (clamped).
pub fn viridis(t: f64) -> RGBColor {
    ViridisRGB::get_color(t.clamp(0.0, 1.0) as f32)
}

/// Converts a drawing error (plotters' errors carry the backend type) into an `anyhow` error.
pub fn drawing<T, E: std::fmt::Display>(result: Result<T, E>) -> anyhow::Result<T> {
    result.map_err(|e| anyhow!("cannot draw the figure: {e}"))
}

/// Draws into `<stem>.tmp.png` beside `path` with `draw`, then renames it to `path`, so an interrupted run
/// never leaves a half-drawn figure under the final name.
pub fn write_png_atomically(
    path: &Path,
    draw: impl FnOnce(&Path) -> anyhow::Result<()>,
) -> anyhow::Result<()> {
    let stem = path.file_stem().and_then(|s| s.to_str()).unwrap_or("figure");
    let temporary = path.with_file_name(format!("{stem}.tmp.png"));
    let result = draw(&temporary);
    if let Err(e) = result {
        let _ = std::fs::remove_file(&temporary);
        return Err(e);
    }
    std::fs::rename(&temporary, path).with_context(|| format!("cannot write {}", path.display()))
}

/// Compact number for axis ticks: plain for moderate magnitudes, otherwise scientific with 2 digits.
pub fn tick(v: f64) -> String {
    if v == 0.0 {
        "0".into()
    } else if (1e-2..1e4).contains(&v.abs()) {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        format!("{v:.1e}")
    }
}
