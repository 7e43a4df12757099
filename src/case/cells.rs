//! `[cells]`: default radius and secretion rate, surface uptake, and the layout (random, cluster, lattice, file
//! or an explicit list), generated through the `mesh` crate and validated against the chamber.

use std::ops::Range;

use mesh::layout::csv_import::max_file_bytes;
use mesh::layout::{
    lattice, random_layout, read_csv, relax_hard_spheres, ChamberBox, LayoutError, PackingMethod,
    PlacementRegion, RandomLayout, RandomTarget,
};
use mesh::{Cell, Layout};
use solver::problem::{ChamberFace, SurfaceUptake};
use toml::Spanned;

use super::raw::{RawCells, RawLayout, RawNumber};
use super::units::Dimension;
use super::validate::{Range0, Source};
use super::CaseError;

/// Radius and secretion rate that every cell takes unless its own entry says otherwise, and the uptake model.
pub(super) struct CellDefaults {
    /// m
    pub radius: f64,
    /// molecules/s
    pub secretion_rate: f64,
    pub uptake: SurfaceUptake,
}

/// How the cells were placed (for reports).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LayoutKind {
    /// `[[cells.list]]` entries.
    List,
    Random(PackingMethod),
    Cluster(PackingMethod),
    Lattice,
    File,
}

impl std::fmt::Display for LayoutKind {
    /// The case file's name of the kind; a dense random layout adds its packing method.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let (name, method) = match *self {
            LayoutKind::List => ("list", None),
            LayoutKind::Random(m) => ("random", Some(m)),
            LayoutKind::Cluster(m) => ("cluster", Some(m)),
            LayoutKind::Lattice => ("lattice", None),
            LayoutKind::File => ("file", None),
        };
        match method {
            Some(m @ PackingMethod::GrowthWithRelaxation) => write!(f, "{name} ({})", m.describe()),
            _ => f.write_str(name),
        }
    }
}

/// A generated layout and where in the file it was described (for later errors).
pub(super) struct PlacedLayout {
    pub layout: Layout,
    pub kind: LayoutKind,
    pub key: &'static str,
    pub span: Option<Range<usize>>,
    pub chamber: ChamberBox,
}

pub(super) fn validate_cell_defaults(
    src: &Source,
    cells: &RawCells,
    section: Option<&Range<usize>>,
) -> Result<CellDefaults, CaseError> {
    let radius = src.required(
        "cells.radius",
        cells.radius.as_ref(),
        section,
        Dimension::LENGTH,
        Range0::Positive,
        "\"8 um\"",
    )?;
    let secretion_rate = src.required(
        "cells.secretion_rate",
        cells.secretion_rate.as_ref(),
        section,
        Dimension::RATE,
        Range0::NonNegative,
        "\"2000 /h\" (molecules per cell per hour)",
    )?;
    let uptake = match &cells.uptake {
        None => SurfaceUptake::None,
        Some(table) => {
            let span = table.span();
            let uptake = table.get_ref();
            let Some(model) = &uptake.model else {
                return Err(src.missing(
                    "cells.uptake.model",
                    Some(&span),
                    "\"none\", \"first_order\" or \"absorbing\"",
                ));
            };
            let rate_constant = &uptake.rate_constant;
            let model_name = model.get_ref().as_str();
            match (model_name, rate_constant) {
                ("first_order", Some(k)) => SurfaceUptake::FirstOrder {
                    rate_constant: src.quantity(
                        "cells.uptake.rate_constant",
                        k,
                        Dimension::VELOCITY,
                        Range0::Positive,
                    )?,
                },
                ("first_order", None) => {
                    return Err(src.missing(
                        "cells.uptake.rate_constant",
                        Some(&span),
                        "a velocity such as \"1e-6 m/s\", required by model = \"first_order\"",
                    ))
                }
                ("none" | "absorbing", Some(k)) => {
                    return Err(src.error(
                        "cells.uptake.rate_constant",
                        Some(&k.span()),
                        format!(
                            "cells.uptake.rate_constant is only used by model = \"first_order\", not by \"{model_name}\""
                        ),
                    ))
                }
                ("none", None) => SurfaceUptake::None,
                ("absorbing", None) => SurfaceUptake::Absorbing,
                (other, _) => {
                    return Err(src.error(
                        "cells.uptake.model",
                        Some(&model.span()),
                        format!(
                            "cells.uptake.model = \"{other}\" is not an uptake model; use \"none\", \"first_order\" or \"absorbing\""
                        ),
                    ))
                }
            }
        }
    };
    Ok(CellDefaults { radius, secretion_rate, uptake })
}

/// Refuse keys that a layout kind does not use: a key that is silently ignored is a mistake waiting to happen.
fn refuse_unused(src: &Source, layout: &RawLayout, kind: &str, allowed: &[&str]) -> Result<(), CaseError> {
    let present: [(&str, Option<Range<usize>>); 11] = [
        ("count", layout.count.as_ref().map(Spanned::span)),
        ("volume_fraction", layout.volume_fraction.as_ref().map(Spanned::span)),
        ("min_gap", layout.min_gap.as_ref().map(Spanned::span)),
        ("seed", layout.seed.as_ref().map(Spanned::span)),
        ("spacing", layout.spacing.as_ref().map(Spanned::span)),
        ("path", layout.path.as_ref().map(Spanned::span)),
        ("inlet_margin", layout.inlet_margin.as_ref().map(Spanned::span)),
        ("outlet_margin", layout.outlet_margin.as_ref().map(Spanned::span)),
        ("centre", layout.centre.as_ref().map(Spanned::span)),
        ("semi_axes", layout.semi_axes.as_ref().map(Spanned::span)),
        ("monte_carlo_sweeps", layout.monte_carlo_sweeps.as_ref().map(Spanned::span)),
    ];
    for (name, span) in present {
        if let Some(span) = span {
            if !allowed.contains(&name) {
                let key = format!("cells.layout.{name}");
                return Err(src.error(
                    &key,
                    Some(&span),
                    format!("{key} is not used by kind = \"{kind}\" (it takes {})", allowed.join(", ")),
                ));
            }
        }
    }
    Ok(())
}

fn layout_error(src: &Source, key: &str, span: Option<&Range<usize>>, source: LayoutError) -> CaseError {
    CaseError::Layout {
        path: src.path.to_path_buf(),
        key: key.to_string(),
        line: span.map(|s| src.line(s)),
        source: Box::new(source),
    }
}

/// What a generated layout needs to know of the case besides `[cells]`.
pub(super) struct LayoutSetting<'a> {
    pub chamber: &'a ChamberBox,
    /// Grid spacing (m): bounds how small, so how many, the cells of a layout file can be.
    pub spacing: f64,
    pub faces: &'a [[ChamberFace; 2]; 3],
}

pub(super) fn build_layout(
    src: &Source,
    cells: &RawCells,
    section: Option<&Range<usize>>,
    defaults: &CellDefaults,
    setting: &LayoutSetting,
) -> Result<PlacedLayout, CaseError> {
    let chamber = setting.chamber;
    let (kind, key, span, layout) = match (&cells.layout, &cells.list) {
        (Some(_), Some(list)) => {
            return Err(src.error(
                "cells.list",
                Some(&list.span()),
                "cells.layout and cells.list are both given; give only one",
            ))
        }
        (None, None) => {
            return Err(src.missing(
                "cells.layout",
                section,
                "give cells.layout = { kind = ... }, [[cells.list]] entries, or list = [] for no cells",
            ))
        }
        (None, Some(list)) => {
            let span = list.span();
            let layout = explicit_list(src, list.get_ref(), defaults)?;
            (LayoutKind::List, "cells.list", span, layout)
        }
        (Some(table), None) => {
            let span = table.span();
            let (kind, layout) = generated_layout(src, table.get_ref(), &span, defaults, setting)?;
            (kind, "cells.layout", span, layout)
        }
    };
    layout.validate(chamber).map_err(|e| layout_error(src, key, Some(&span), e))?;
    Ok(PlacedLayout { layout, kind, key, span: Some(span), chamber: *chamber })
}

fn generated_layout(
    src: &Source,
    raw: &RawLayout,
    span: &Range<usize>,
    defaults: &CellDefaults,
    setting: &LayoutSetting,
) -> Result<(LayoutKind, Layout), CaseError> {
    const KINDS: &str = "\"random\", \"cluster\", \"lattice\" or \"file\"";
    let Some(kind) = &raw.kind else {
        return Err(src.missing("cells.layout.kind", Some(span), KINDS));
    };
    let chamber = setting.chamber;
    let fail = |e| layout_error(src, "cells.layout", Some(span), e);
    match kind.get_ref().as_str() {
        "random" => {
            let keys = [
                "count",
                "volume_fraction",
                "min_gap",
                "seed",
                "inlet_margin",
                "outlet_margin",
                "monte_carlo_sweeps",
            ];
            refuse_unused(src, raw, "random", &keys)?;
            let spec = random_spec(src, raw, span, defaults)?;
            let region = PlacementRegion::Chamber { margins: margins(src, raw, setting)? };
            let (method, layout) = place_randomly(src, raw, span, &spec, chamber, &region)?;
            Ok((LayoutKind::Random(method), layout))
        }
        "cluster" => {
            let keys = [
                "centre",
                "semi_axes",
                "count",
                "volume_fraction",
                "min_gap",
                "seed",
                "inlet_margin",
                "outlet_margin",
                "monte_carlo_sweeps",
            ];
            refuse_unused(src, raw, "cluster", &keys)?;
            let mut axes = [[0.0; 3]; 2];
            for (n, (name, value)) in
                [("centre", &raw.centre), ("semi_axes", &raw.semi_axes)].into_iter().enumerate()
            {
                let key = format!("cells.layout.{name}");
                let Some(list) = value else {
                    return Err(src.missing(
                        &key,
                        Some(span),
                        "three lengths (x, y, z), e.g. [\"100 um\", \"100 um\", \"100 um\"]",
                    ));
                };
                axes[n] =
                    three_lengths(src, &key, list, if n == 0 { Range0::Any } else { Range0::Positive })?;
            }
            let spec = random_spec(src, raw, span, defaults)?;
            let margins = margins(src, raw, setting)?;
            cluster_clear_of_margins(src, raw, chamber, &margins, axes, spec.radius)?;
            let region = PlacementRegion::Ellipsoid { centre: axes[0], semi_axes: axes[1] };
            let (method, layout) = place_randomly(src, raw, span, &spec, chamber, &region)?;
            Ok((LayoutKind::Cluster(method), layout))
        }
        "lattice" => {
            refuse_unused(src, raw, "lattice", &["spacing", "inlet_margin", "outlet_margin"])?;
            let Some(list) = &raw.spacing else {
                return Err(src.missing(
                    "cells.layout.spacing",
                    Some(span),
                    "three lengths, e.g. [\"40 um\", \"40 um\", \"40 um\"]",
                ));
            };
            let spacing = three_lengths(src, "cells.layout.spacing", list, Range0::Positive)?;
            let layout = lattice(spacing, chamber, defaults.radius, defaults.secretion_rate).map_err(fail)?;
            // Lattice sites stay where the spacing puts them; the cells that would reach into a margin go.
            let margins = margins(src, raw, setting)?;
            let (layout, dropped) = layout.without_cells_in_margins(chamber, &margins);
            if layout.cells.is_empty() && dropped > 0 {
                let (key, at) = margin_key(raw, span);
                return Err(src.error(
                    key,
                    Some(&at),
                    format!(
                        "{key} (with the other margin, if given) leaves no room for any of the {dropped} cells of \
                         the lattice"
                    ),
                ));
            }
            Ok((LayoutKind::Lattice, layout))
        }
        "file" => {
            refuse_unused(src, raw, "file", &["path", "inlet_margin", "outlet_margin"])?;
            let Some(path) = &raw.path else {
                return Err(src.missing(
                    "cells.layout.path",
                    Some(span),
                    "a CSV file with columns x,y,z[,radius,secretion_rate]",
                ));
            };
            // Relative to the case file's folder, so a case and its layout move together.
            let folder = src.path.parent().unwrap_or(std::path::Path::new(""));
            let file = folder.join(path.get_ref());
            // No more cells than the densest packing (π/√18, Kepler's bound) of the smallest cells the grid
            // accepts (radius 2.5 h) fits in the chamber.
            let smallest = mesh::layout::resolution::MIN_RADIUS_IN_SPACINGS * setting.spacing;
            let most_cells = std::f64::consts::PI / 18f64.sqrt() * chamber.volume()
                / (4.0 / 3.0 * std::f64::consts::PI * smallest.powi(3));
            let limit = max_file_bytes(most_cells.ceil().min(u64::MAX as f64) as u64);
            let layout = read_csv(&file, defaults.radius, defaults.secretion_rate, limit)
                .map_err(|e| layout_error(src, "cells.layout.path", Some(&path.span()), e))?;
            file_clear_of_margins(src, raw, &layout, chamber, &margins(src, raw, setting)?)?;
            Ok((LayoutKind::File, layout))
        }
        other => Err(src.error(
            "cells.layout.kind",
            Some(&kind.span()),
            format!("cells.layout.kind = \"{other}\" is not a layout kind; use {KINDS} (or [[cells.list]])"),
        )),
    }
}

/// `inlet_margin` and `outlet_margin` as margins along x (zero when absent); each needs its face to be an
/// inlet or an outlet.
fn margins(src: &Source, raw: &RawLayout, setting: &LayoutSetting) -> Result<[[f64; 2]; 3], CaseError> {
    let mut margins = [[0.0; 2]; 3];
    for (side, name, face) in
        [(0, "inlet_margin", ChamberFace::Inlet), (1, "outlet_margin", ChamberFace::Outlet)]
    {
        let value = if side == 0 { &raw.inlet_margin } else { &raw.outlet_margin };
        let Some(value) = value else { continue };
        let key = format!("cells.layout.{name}");
        let face_name = ["x_min", "x_max"][side];
        if setting.faces[0][side] != face {
            return Err(src.error(
                &key,
                Some(&value.span()),
                format!(
                    "{key} keeps cells away from the {face_name} face, which is not an {}",
                    &name[..name.len() - 7]
                ),
            ));
        }
        margins[0][side] = src.quantity(&key, value, Dimension::LENGTH, Range0::NonNegative)?;
    }
    Ok(margins)
}

/// The margin key to blame when both could be (the inlet's when given), and where it is written.
fn margin_key(raw: &RawLayout, span: &Range<usize>) -> (&'static str, Range<usize>) {
    match (&raw.inlet_margin, &raw.outlet_margin) {
        (Some(m), _) => ("cells.layout.inlet_margin", m.span()),
        (None, Some(m)) => ("cells.layout.outlet_margin", m.span()),
        (None, None) => ("cells.layout", span.clone()),
    }
}

/// A cluster is where its centre and semi-axes put it: one whose ellipsoid, grown by a cell radius, reaches
/// into a margin is refused rather than moved or cut.
fn cluster_clear_of_margins(
    src: &Source,
    raw: &RawLayout,
    chamber: &ChamberBox,
    margins: &[[f64; 2]; 3],
    [centre, semi_axes]: [[f64; 3]; 2],
    radius: f64,
) -> Result<(), CaseError> {
    let reach = [centre[0] - semi_axes[0] - radius, centre[0] + semi_axes[0] + radius];
    let limit = [chamber.lower[0] + margins[0][0], chamber.upper[0] - margins[0][1]];
    for (side, value, name) in [(0, &raw.inlet_margin, "inlet"), (1, &raw.outlet_margin, "outlet")] {
        let Some(value) = value else { continue };
        let into = if side == 0 { reach[0] < limit[0] } else { reach[1] > limit[1] };
        let distance = if side == 0 { reach[0] - chamber.lower[0] } else { chamber.upper[0] - reach[1] };
        // A cluster out of the chamber altogether is refused by the placement, which says so.
        if into && distance >= 0.0 {
            let key = format!("cells.layout.{name}_margin");
            return Err(src.error(
                &key,
                Some(&value.span()),
                format!(
                    "the cluster with its cells reaches to {:.2} um from the {name} face, inside the {name} margin \
                     of {:.2} um; move or shrink the cluster, or lower {key}",
                    distance * 1e6,
                    margins[0][side] * 1e6
                ),
            ));
        }
    }
    Ok(())
}

/// A layout file is used as written: a cell in a margin is refused, naming the margin and the cell.
fn file_clear_of_margins(
    src: &Source,
    raw: &RawLayout,
    layout: &Layout,
    chamber: &ChamberBox,
    margins: &[[f64; 2]; 3],
) -> Result<(), CaseError> {
    for (side, value, name) in [(0, &raw.inlet_margin, "inlet"), (1, &raw.outlet_margin, "outlet")] {
        let Some(value) = value else { continue };
        let mut one_side = [[0.0; 2]; 3];
        one_side[0][side] = margins[0][side];
        let inside = layout.cells_in_margins(chamber, &one_side);
        if let Some(first) = inside.first() {
            let key = format!("cells.layout.{name}_margin");
            return Err(src.error(
                &key,
                Some(&value.span()),
                format!(
                    "{} cell{} of the layout file reach{} into the {name} margin of {:.2} um (the first: cell {first}); \
                     move them or lower {key}",
                    inside.len(),
                    if inside.len() == 1 { "" } else { "s" },
                    if inside.len() == 1 { "es" } else { "" },
                    margins[0][side] * 1e6
                ),
            ));
        }
    }
    Ok(())
}

/// A random or cluster layout placed in `region`, then moved by `monte_carlo_sweeps` hard-sphere Monte Carlo
/// sweeps when asked.
fn place_randomly(
    src: &Source,
    raw: &RawLayout,
    span: &Range<usize>,
    spec: &RandomLayout,
    chamber: &ChamberBox,
    region: &PlacementRegion,
) -> Result<(PackingMethod, Layout), CaseError> {
    let sweeps = match &raw.monte_carlo_sweeps {
        Some(v) => {
            let sweeps = src.whole_number("cells.layout.monte_carlo_sweeps", v, 0)?;
            if sweeps > MAX_SWEEPS {
                return Err(src.error(
                    "cells.layout.monte_carlo_sweeps",
                    Some(&v.span()),
                    format!(
                        "cells.layout.monte_carlo_sweeps = {sweeps} is more than {MAX_SWEEPS}; a few hundred sweeps \
                         relax a layout fully"
                    ),
                ));
            }
            sweeps
        }
        None => 0,
    };
    let mut placement = random_layout(spec, chamber, region).map_err(|e| random_error(src, raw, span, e))?;
    if sweeps > 0 {
        relax_hard_spheres(&mut placement.layout, spec, chamber, region, sweeps)
            .map_err(|e| layout_error(src, "cells.layout.monte_carlo_sweeps", Some(span), e))?;
    }
    Ok((placement.method, placement.layout))
}

/// Most Monte Carlo sweeps a layout may ask for (each is one pass over the cells).
const MAX_SWEEPS: usize = 100_000;

/// A refused random layout, blamed on the key that sets how many cells there are.
fn random_error(src: &Source, raw: &RawLayout, span: &Range<usize>, error: LayoutError) -> CaseError {
    let (key, at) = match (&raw.count, &raw.volume_fraction) {
        (Some(n), _) => ("cells.layout.count", n.span()),
        (None, Some(phi)) => ("cells.layout.volume_fraction", phi.span()),
        (None, None) => ("cells.layout", span.clone()),
    };
    let key = if matches!(error, LayoutError::Invalid { .. }) { "cells.layout" } else { key };
    let at = if key == "cells.layout" { span.clone() } else { at };
    layout_error(src, key, Some(&at), error)
}

/// `count` or `volume_fraction`, `min_gap` (default 0) and `seed` (default 1) of a random or cluster layout.
fn random_spec(
    src: &Source,
    raw: &RawLayout,
    span: &Range<usize>,
    defaults: &CellDefaults,
) -> Result<RandomLayout, CaseError> {
    let target = match (&raw.count, &raw.volume_fraction) {
        (Some(n), None) => RandomTarget::Count(src.whole_number("cells.layout.count", n, 1)?),
        (None, Some(phi)) => {
            let phi = src.quantity(
                "cells.layout.volume_fraction",
                phi,
                Dimension::DIMENSIONLESS,
                Range0::Positive,
            )?;
            if phi >= 1.0 {
                let s = raw.volume_fraction.as_ref().map(Spanned::span);
                return Err(src.error(
                    "cells.layout.volume_fraction",
                    s.as_ref(),
                    format!("cells.layout.volume_fraction = {phi} must be below 1"),
                ));
            }
            RandomTarget::VolumeFraction(phi)
        }
        (Some(_), Some(phi)) => {
            return Err(src.error(
                "cells.layout.volume_fraction",
                Some(&phi.span()),
                "cells.layout.count and cells.layout.volume_fraction are both given; give only one",
            ))
        }
        (None, None) => {
            return Err(src.missing(
                "cells.layout.count",
                Some(span),
                "a random or cluster layout needs count = N or volume_fraction = φ",
            ))
        }
    };
    let min_gap = src.quantity_or(
        "cells.layout.min_gap",
        raw.min_gap.as_ref(),
        Dimension::LENGTH,
        Range0::NonNegative,
        0.0,
    )?;
    let seed = raw.seed.as_ref().map_or(1, |s| *s.get_ref());
    Ok(RandomLayout {
        target,
        radius: defaults.radius,
        secretion_rate: defaults.secretion_rate,
        min_gap,
        seed,
    })
}

fn three_lengths(
    src: &Source,
    key: &str,
    list: &Spanned<Vec<Spanned<RawNumber>>>,
    range: Range0,
) -> Result<[f64; 3], CaseError> {
    let values = list.get_ref();
    if values.len() != 3 {
        return Err(src.error(
            key,
            Some(&list.span()),
            format!("{key} has {} values; it needs three lengths (x, y, z)", values.len()),
        ));
    }
    let mut out = [0.0; 3];
    for (a, v) in values.iter().enumerate() {
        out[a] = src.quantity(&format!("{key}[{a}]"), v, Dimension::LENGTH, range)?;
    }
    Ok(out)
}

/// `[[cells.list]]` entries (or `list = []`): ids in the order written.
fn explicit_list(
    src: &Source,
    entries: &[Spanned<super::raw::RawCellEntry>],
    defaults: &CellDefaults,
) -> Result<Layout, CaseError> {
    let mut cells = Vec::with_capacity(entries.len());
    for (id, entry) in entries.iter().enumerate() {
        let span = entry.span();
        let e = entry.get_ref();
        let prefix = format!("cells.list[{id}]");
        let mut centre = [0.0; 3];
        for (a, (name, value)) in [("x", &e.x), ("y", &e.y), ("z", &e.z)].into_iter().enumerate() {
            let key = format!("{prefix}.{name}");
            centre[a] = src.required(
                &key,
                value.as_ref(),
                Some(&span),
                Dimension::LENGTH,
                Range0::Any,
                "\"100 um\"",
            )?;
        }
        let radius = src.quantity_or(
            &format!("{prefix}.radius"),
            e.radius.as_ref(),
            Dimension::LENGTH,
            Range0::Positive,
            defaults.radius,
        )?;
        let secretion_rate = src.quantity_or(
            &format!("{prefix}.secretion_rate"),
            e.secretion_rate.as_ref(),
            Dimension::RATE,
            Range0::NonNegative,
            defaults.secretion_rate,
        )?;
        cells.push(Cell { id, centre, radius, secretion_rate });
    }
    Ok(Layout { cells })
}

/// Refuse cells the grid cannot resolve; return warnings for those that are resolved only coarsely, for
/// gaps narrower than a grid spacing, and for a layout file without cells.
pub(super) fn check_resolution(
    src: &Source,
    placed: &PlacedLayout,
    spacing: f64,
) -> Result<Vec<String>, CaseError> {
    let warnings = placed
        .layout
        .check_resolution(spacing)
        .map_err(|e| layout_error(src, placed.key, placed.span.as_ref(), e))?;
    let describe = |w: &mesh::layout::CellResolutionWarning| {
        format!(
            "cell {} has a radius of only {:.2} grid spacings (under 4); expect a relative error of about {:.1}% in its surface integrals",
            w.id,
            w.radius_in_spacings,
            100.0 * w.expected_surface_error
        )
    };
    let mut messages: Vec<String> = if warnings.len() <= 3 {
        warnings.iter().map(describe).collect()
    } else {
        let worst = warnings
            .iter()
            .max_by(|a, b| a.expected_surface_error.total_cmp(&b.expected_surface_error))
            .map(describe)
            .unwrap_or_default();
        vec![format!("{} cells have a radius under 4 grid spacings; the worst: {worst}", warnings.len())]
    };
    messages.extend(narrow_gaps(placed, spacing));
    if placed.kind == LayoutKind::File && placed.layout.cells.is_empty() {
        messages.push(format!(
            "{}: the layout file holds no cells, so the chamber has none (valid, but most likely a mistake; \
             use list = [] for a chamber without cells on purpose)",
            placed
                .span
                .as_ref()
                .map_or(String::new(), |s| format!("line {}: cells.layout.path", src.line(s)))
        ));
    }
    Ok(messages)
}

/// A warning for cells closer than one grid spacing. Between two spheres at gap g the surfaces are closer
/// than h over a cap of area about π a (h − g) on each (the local gap grows as g + a θ² away from the line of
/// centres), a fraction (h − g)/(4a) of the sphere; there the fluid between them is less than one grid cell
/// thick, so transport through the gap is not resolved and the surface values on that cap are off.
fn narrow_gaps(placed: &PlacedLayout, spacing: f64) -> Option<String> {
    let close = placed.layout.close_pairs(&placed.chamber, spacing);
    let (first, second, gap) = close.closest?;
    let radius = |id: usize| placed.layout.cells.iter().find(|c| c.id == id).map_or(f64::NAN, |c| c.radius);
    let smaller = radius(first).min(radius(second));
    let fraction = (spacing - gap.max(0.0)) / (4.0 * smaller);
    Some(format!(
        "{} pair{} of cells {} surface gaps below the grid spacing of {:.2} um (the narrowest, {:.2} um, between \
         cells {first} and {second}); the fluid between them is thinner than one grid cell, so transport through \
         the gap is not resolved: expect errors of order {:.1}% in such a cell's surface integrals per close \
         neighbour (the part of its surface nearer than one grid spacing to the neighbour); refine the grid or \
         raise cells.layout.min_gap",
        close.count,
        if close.count == 1 { "" } else { "s" },
        if close.count == 1 { "has" } else { "have" },
        spacing * 1e6,
        gap * 1e6,
        100.0 * fraction
    ))
}
