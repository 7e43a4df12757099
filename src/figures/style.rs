//! What every figure shares: the font (DejaVu Sans, embedded, so no system fonts are needed), the colour map
//! (viridis: perceptually uniform and readable in grey and by colour-blind readers; van der Walt & Smith's
//! matplotlib default, common practice), sizes, and the atomic PNG write.

use std::path::Path;
use std::sync::Once;

use anyhow::{anyhow, Context};
use plotters::coord::Shift;
use plotters::prelude::{BitMapBackend, DrawingArea, IntoDrawingArea};
use plotters::style::colors::colormaps::ViridisRGB;
use plotters::style::{FontStyle, RGBColor};

use crate::io::atomic::without_fsync;
use crate::io::write_atomic;

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

/// A figure being drawn: plotters' bitmap backend over an in-memory RGB buffer.
pub type Figure<'a> = DrawingArea<BitMapBackend<'a>, Shift>;

/// Draws a figure of `size` (width, height) pixels with `draw` in memory, encodes it as PNG and writes it to
/// `path` atomically (temporary file renamed into place), so an interrupted run never leaves a half-drawn
/// figure under the final name. Figures are not synced to disk: they are drawn again from the tables.
///
/// Encoded here rather than by plotters (which saves through the `image` crate with adaptive row filters and
/// default deflate): the fixed Paeth filter with fast deflate gives files of the same size in less time
/// (bench/RECORDS.md, "PNG encoding of figures").
pub fn write_png(
    path: &Path,
    size: (u32, u32),
    draw: impl FnOnce(&Figure) -> anyhow::Result<()>,
) -> anyhow::Result<()> {
    let mut pixels = vec![0u8; 3 * size.0 as usize * size.1 as usize];
    {
        let root = BitMapBackend::with_buffer(&mut pixels, size).into_drawing_area();
        draw(&root)?;
        drawing(root.present())?;
    }
    let mut encoded = Vec::with_capacity(pixels.len() / 8);
    let mut encoder = png::Encoder::new(&mut encoded, size.0, size.1);
    encoder.set_color(png::ColorType::Rgb);
    encoder.set_depth(png::BitDepth::Eight);
    encoder.set_compression(png::Compression::Fast);
    encoder.set_filter(png::FilterType::Paeth);
    encoder.set_adaptive_filter(png::AdaptiveFilterType::NonAdaptive);
    let encoding = |e: png::EncodingError| anyhow!("cannot encode {} as PNG: {e}", path.display());
    let mut writer = encoder.write_header().map_err(encoding)?;
    writer.write_image_data(&pixels).map_err(encoding)?;
    writer.finish().map_err(encoding)?;
    without_fsync(|| write_atomic(path, &encoded)).with_context(|| format!("cannot write {}", path.display()))
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
