//! `[cells]`: default radius and secretion rate, surface uptake, and the layout (random, lattice, file or an
//! explicit list), generated through the `mesh` crate and validated against the chamber.

use std::ops::Range;

use mesh::layout::{
    lattice, random_sequential_addition, read_csv, ChamberBox, LayoutError, RandomLayout, RandomTarget,
};
use mesh::{Cell, Layout};
use solver::problem::SurfaceUptake;
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

/// A generated layout and where in the file it was described (for later errors).
pub(super) struct PlacedLayout {
    pub layout: Layout,
    pub kind: &'static str,
    pub key: &'static str,
    pub span: Option<Range<usize>>,
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
    let present: [(&str, Option<Range<usize>>); 6] = [
        ("count", layout.count.as_ref().map(Spanned::span)),
        ("volume_fraction", layout.volume_fraction.as_ref().map(Spanned::span)),
        ("min_gap", layout.min_gap.as_ref().map(Spanned::span)),
        ("seed", layout.seed.as_ref().map(Spanned::span)),
        ("spacing", layout.spacing.as_ref().map(Spanned::span)),
        ("path", layout.path.as_ref().map(Spanned::span)),
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

pub(super) fn build_layout(
    src: &Source,
    cells: &RawCells,
    section: Option<&Range<usize>>,
    defaults: &CellDefaults,
    chamber: &ChamberBox,
) -> Result<PlacedLayout, CaseError> {
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
            ("list", "cells.list", span, layout)
        }
        (Some(table), None) => {
            let span = table.span();
            let (kind, layout) = generated_layout(src, table.get_ref(), &span, defaults, chamber)?;
            (kind, "cells.layout", span, layout)
        }
    };
    layout.validate(chamber).map_err(|e| layout_error(src, key, Some(&span), e))?;
    Ok(PlacedLayout { layout, kind, key, span: Some(span) })
}

fn generated_layout(
    src: &Source,
    raw: &RawLayout,
    span: &Range<usize>,
    defaults: &CellDefaults,
    chamber: &ChamberBox,
) -> Result<(&'static str, Layout), CaseError> {
    let Some(kind) = &raw.kind else {
        return Err(src.missing("cells.layout.kind", Some(span), "\"random\", \"lattice\" or \"file\""));
    };
    let fail = |e| layout_error(src, "cells.layout", Some(span), e);
    match kind.get_ref().as_str() {
        "random" => {
            refuse_unused(src, raw, "random", &["count", "volume_fraction", "min_gap", "seed"])?;
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
                        "a random layout needs count = N or volume_fraction = φ",
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
            let spec = RandomLayout {
                target,
                radius: defaults.radius,
                secretion_rate: defaults.secretion_rate,
                min_gap,
                seed,
            };
            Ok(("random", random_sequential_addition(&spec, chamber).map_err(fail)?))
        }
        "lattice" => {
            refuse_unused(src, raw, "lattice", &["spacing"])?;
            let Some(list) = &raw.spacing else {
                return Err(src.missing(
                    "cells.layout.spacing",
                    Some(span),
                    "three lengths, e.g. [\"40 um\", \"40 um\", \"40 um\"]",
                ));
            };
            let spacing = three_lengths(src, "cells.layout.spacing", list)?;
            Ok(("lattice", lattice(spacing, chamber, defaults.radius, defaults.secretion_rate).map_err(fail)?))
        }
        "file" => {
            refuse_unused(src, raw, "file", &["path"])?;
            let Some(path) = &raw.path else {
                return Err(src.missing("cells.layout.path", Some(span), "a CSV file with columns x,y,z[,radius,secretion_rate]"));
            };
            // Relative to the case file's folder, so a case and its layout move together.
            let folder = src.path.parent().unwrap_or(std::path::Path::new(""));
            let file = folder.join(path.get_ref());
            let layout = read_csv(&file, defaults.radius, defaults.secretion_rate)
                .map_err(|e| layout_error(src, "cells.layout.path", Some(&path.span()), e))?;
            Ok(("file", layout))
        }
        other => Err(src.error(
            "cells.layout.kind",
            Some(&kind.span()),
            format!(
                "cells.layout.kind = \"{other}\" is not a layout kind; use \"random\", \"lattice\" or \"file\" (or [[cells.list]])"
            ),
        )),
    }
}

fn three_lengths(
    src: &Source,
    key: &str,
    list: &Spanned<Vec<Spanned<RawNumber>>>,
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
        out[a] = src.quantity(&format!("{key}[{a}]"), v, Dimension::LENGTH, Range0::Positive)?;
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

/// Refuse cells the grid cannot resolve; return warnings for those that are resolved only coarsely.
pub(super) fn check_resolution(
    src: &Source,
    placed: &PlacedLayout,
    spacing: f64,
) -> Result<Vec<String>, CaseError> {
    let warnings = placed
        .layout
        .check_resolution(spacing)
        .map_err(|e| layout_error(src, placed.key, placed.span.as_ref(), e))?;
    let describe = |w: &mesh::layout::ResolutionWarning| {
        format!(
            "cell {} has a radius of only {:.2} grid spacings (under 4); expect a relative error of about {:.1}% in its surface integrals",
            w.id,
            w.radius_in_spacings,
            100.0 * w.expected_surface_error
        )
    };
    if warnings.len() <= 3 {
        return Ok(warnings.iter().map(describe).collect());
    }
    let worst = warnings
        .iter()
        .max_by(|a, b| a.expected_surface_error.total_cmp(&b.expected_surface_error))
        .map(describe)
        .unwrap_or_default();
    Ok(vec![format!("{} cells have a radius under 4 grid spacings; the worst: {worst}", warnings.len())])
}
