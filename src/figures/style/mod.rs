//! The plumefield house style, defined once for every figure: colour maps and series palette
//! ([`colour_maps`]), the font, the ink and paper colours, left-aligned titles, display units ([`units`]),
//! numbers to significant digits ([`numbers`]), axes with the scale chosen from the data ([`axes`]), our own
//! legend placed clear of the data ([`legend`]), what a figure shows recorded for checks ([`record`]), and the
//! atomic PNG write.
//!
//! Font: DejaVu Sans Condensed (embedded from the `dejavu` crate; Bitstream Vera licence with DejaVu changes in
//! the public domain), so no system fonts are needed and more words fit on an axis.

pub mod axes;
pub mod colour_maps;
pub mod legend;
pub mod numbers;
pub mod record;
pub mod units;

use std::path::Path;
use std::sync::Once;

use anyhow::{anyhow, Context};
use plotters::chart::{ChartBuilder, ChartContext};
use plotters::coord::cartesian::Cartesian2d;
use plotters::coord::Shift;
use plotters::prelude::{BitMapBackend, DrawingArea, IntoDrawingArea, PathElement, Rectangle};
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{Color, FontStyle, IntoFont, RGBColor, TextStyle};

use crate::io::atomic::without_fsync;
use crate::io::write_atomic;

pub use axes::{choose_scale, Axis, Scale};
pub use legend::{Legend, PixelBox, Swatch};
pub use numbers::significant;
pub use record::FigureRecord;
pub use units::{axis_label, DisplayUnit};

/// Font family name registered for all figure text.
pub const FONT: &str = "sans-serif";
/// Text, axes and frames.
pub const INK: RGBColor = RGBColor(34, 38, 48);
/// Secondary text (notes, counts).
pub const MUTED: RGBColor = RGBColor(96, 100, 112);
/// Legend and colour-bar background.
pub const PAPER: RGBColor = RGBColor(252, 250, 244);
/// Legend frame.
pub const RULE: RGBColor = RGBColor(200, 194, 180);
/// Grid lines at the ticks.
pub const GRID: RGBColor = RGBColor(232, 230, 226);
/// The level a reader must compare with (readable level, thresholds).
pub const LEVEL: RGBColor = RGBColor(196, 30, 58);

/// Registers the embedded DejaVu Sans Condensed once per process (plotters' ab_glyph backend has no system
/// fonts).
pub fn register_fonts() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        let _ = plotters::style::register_font(FONT, FontStyle::Normal, dejavu::sans_condensed::regular());
        let _ = plotters::style::register_font(FONT, FontStyle::Bold, dejavu::sans_condensed::bold());
    });
}

/// Converts a drawing error (plotters' errors carry the backend type) into an `anyhow` error.
pub fn drawing<T, E: std::fmt::Display>(result: Result<T, E>) -> anyhow::Result<T> {
    result.map_err(|e| anyhow!("cannot draw the figure: {e}"))
}

/// A vertical interval from pixel `top` to `bottom` with short end ticks, its pixels added to `occupied` (so the
/// legend keeps clear of it).
pub fn draw_interval(
    root: &Figure,
    top: (i32, i32),
    bottom: (i32, i32),
    colour: &RGBColor,
    occupied: &mut Vec<(i32, i32)>,
) -> anyhow::Result<()> {
    occupied.extend(legend::along(&[top, bottom]));
    let bar = |points: Vec<(i32, i32)>| drawing(root.draw(&PathElement::new(points, colour.stroke_width(2))));
    bar(vec![top, bottom])?;
    for end in [top, bottom] {
        bar(vec![(end.0 - 4, end.1), (end.0 + 4, end.1)])?;
    }
    Ok(())
}

/// A figure being drawn: plotters' bitmap backend over an in-memory RGB buffer.
pub type Figure<'a> = DrawingArea<BitMapBackend<'a>, Shift>;

/// A chart on our axes (plot coordinates, see [`Axis::map`]).
pub type Chart<'a, 'b> = ChartContext<'a, BitMapBackend<'b>, Cartesian2d<axes::Ticked, axes::Ticked>>;

/// Text style in ink (or `colour`), `size` pixels, anchored at `pos`.
pub fn text_style(size: u32, colour: &RGBColor, h: HPos, v: VPos) -> TextStyle<'_> {
    TextStyle::from((FONT, size).into_font()).color(colour).pos(Pos::new(h, v))
}

/// Fills the figure white and writes the title (bold, left-aligned) and an optional second line under it;
/// returns the area below.
pub fn titled<'b>(root: &Figure<'b>, title: &str, subtitle: Option<&str>) -> anyhow::Result<Figure<'b>> {
    drawing(root.fill(&plotters::style::WHITE))?;
    let bold = TextStyle::from((FONT, 20, FontStyle::Bold).into_font()).color(&INK);
    drawing(root.draw_text(title, &bold, (18, 10)))?;
    let mut top = 38;
    if let Some(line) = subtitle {
        drawing(root.draw_text(line, &text_style(14, &MUTED, HPos::Left, VPos::Top), (18, 36)))?;
        top = 58;
    }
    Ok(root.split_vertically(top).1)
}

/// Our axes on `area`: ink axes, grid lines at the ticks only, tick labels to significant digits, each axis
/// label with its unit.
pub fn chart<'a, 'b>(area: &'a Figure<'b>, x: &Axis, y: &Axis) -> anyhow::Result<Chart<'a, 'b>> {
    let mut chart = drawing(
        ChartBuilder::on(area)
            .margin(8)
            .margin_right(26)
            .x_label_area_size(50)
            .y_label_area_size(78)
            .build_cartesian_2d(x.coord(), y.coord()),
    )?;
    drawing(
        chart
            .configure_mesh()
            .bold_line_style(GRID.stroke_width(1))
            .light_line_style(plotters::style::TRANSPARENT)
            .axis_style(INK.stroke_width(1))
            .x_desc(x.label.as_str())
            .y_desc(y.label.as_str())
            .x_label_formatter(&|v| x.tick_text(*v))
            .y_label_formatter(&|v| y.tick_text(*v))
            .label_style((FONT, 14).into_font().color(&INK))
            .axis_desc_style((FONT, 15).into_font().color(&INK))
            .draw(),
    )?;
    Ok(chart)
}

/// The plot area of a chart in pixels.
pub fn plot_box(chart: &Chart) -> PixelBox {
    let (xs, ys) = chart.plotting_area().get_pixel_range();
    ((xs.start, ys.start), (xs.end, ys.end))
}

/// Places `legend` clear of `occupied` (the pixels of the plotted data) inside the plot of `chart`, else at the
/// plot's top-left corner; draws it on `root` and records its box, its entries and the data pixels in `record`.
pub fn place_legend(
    root: &Figure,
    chart: &Chart,
    legend: &Legend,
    occupied: Vec<(i32, i32)>,
    record: &mut FigureRecord,
) -> anyhow::Result<()> {
    let plot = plot_box(chart);
    record.legend = if legend.entries.is_empty() {
        None
    } else {
        let size = legend.size(root);
        let corner = plot.0;
        let at =
            Legend::place(size, plot, &occupied).unwrap_or((corner, (corner.0 + size.0, corner.1 + size.1)));
        legend.draw(root, at)?;
        Some(at)
    };
    record.notes.extend(legend.entries.iter().map(|e| e.1.clone()));
    record.occupied = occupied;
    Ok(())
}

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

/// A vertical colour bar on `area`: `colour` of the fraction along `axis` (display units), ticks and label from
/// the axis.
pub fn colour_bar(area: &Figure, axis: &Axis, colour: impl Fn(f64) -> RGBColor) -> anyhow::Result<()> {
    let flat = Axis {
        label: String::new(),
        ticks: vec![],
        tick_labels: vec![],
        ..Axis::between(0.0, 1.0, Scale::Linear, "")
    };
    let mut chart = drawing(
        ChartBuilder::on(area)
            .margin_top(8)
            .margin_bottom(58)
            .margin_left(6)
            .margin_right(8)
            .right_y_label_area_size(86)
            .build_cartesian_2d(flat.coord(), axis.coord()),
    )?;
    let (lo, hi) = axis.range;
    let steps = 160;
    drawing(chart.draw_series((0..steps).map(|s| {
        let (a, b) =
            (lo + (hi - lo) * s as f64 / steps as f64, lo + (hi - lo) * (s + 1) as f64 / steps as f64);
        Rectangle::new([(0.0, a), (1.0, b)], colour((s as f64 + 0.5) / steps as f64).filled())
    })))?;
    drawing(
        chart
            .configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .axis_style(INK.stroke_width(1))
            .y_label_formatter(&|v| axis.tick_text(*v))
            .label_style((FONT, 13).into_font().color(&INK))
            .y_desc(axis.label.as_str())
            .axis_desc_style((FONT, 14).into_font().color(&INK))
            .draw(),
    )?;
    Ok(())
}

/// Shaft and two head strokes of an arrow from `from` to `to`; `head` is the head length over the arrow length.
pub fn arrow(from: (f64, f64), to: (f64, f64), head: f64) -> Vec<Vec<(f64, f64)>> {
    let (dx, dy) = (to.0 - from.0, to.1 - from.1);
    let back = |angle: f64| {
        let (c, s) = (angle.cos(), angle.sin());
        (to.0 - head * (c * dx - s * dy), to.1 - head * (s * dx + c * dy))
    };
    vec![vec![from, to], vec![back(0.45), to, back(-0.45)]]
}

/// A smooth disc outline (closed polygon of 72 vertices) in plot units.
pub fn disc(centre: (f64, f64), radius: f64) -> Vec<(f64, f64)> {
    (0..72)
        .map(|s| {
            let t = s as f64 / 72.0 * std::f64::consts::TAU;
            (centre.0 + radius * t.cos(), centre.1 + radius * t.sin())
        })
        .collect()
}

/// A note in muted text at pixel `at` of `root` (counts of values not drawn, scale keys).
pub fn note(root: &Figure, text: &str, at: (i32, i32)) -> anyhow::Result<()> {
    drawing(root.draw_text(text, &text_style(14, &MUTED, HPos::Left, VPos::Top), at))
}
