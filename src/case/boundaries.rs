//! `[boundaries]`: what each of the six chamber faces does. x is the mean-flow direction, so an inlet can only
//! be x_min and an outlet only x_max; periodic faces come in pairs; a flow needs a way in and a way out.

use std::ops::Range;

use super::raw::RawBoundaries;
use super::validate::Source;
use super::CaseError;
use solver::problem::{ChamberBoundaries, ChamberFace, FarFieldSources};

const NAMES: [[&str; 2]; 3] = [["x_min", "x_max"], ["y_min", "y_max"], ["z_min", "z_max"]];

fn face_by_name(name: &str) -> Option<ChamberFace> {
    Some(match name {
        "inlet" => ChamberFace::Inlet,
        "outlet" => ChamberFace::Outlet,
        "wall" => ChamberFace::Wall,
        "symmetry" => ChamberFace::Symmetry,
        "periodic" => ChamberFace::Periodic,
        "far_field" => ChamberFace::FarField,
        _ => return None,
    })
}

fn name_of(face: ChamberFace) -> &'static str {
    match face {
        ChamberFace::Inlet => "inlet",
        ChamberFace::Outlet => "outlet",
        ChamberFace::Wall => "wall",
        ChamberFace::Symmetry => "symmetry",
        ChamberFace::Periodic => "periodic",
        ChamberFace::FarField => "far_field",
    }
}

pub(super) fn validate_boundaries(
    src: &Source,
    raw: &RawBoundaries,
    section: Option<&Range<usize>>,
    mean_velocity: f64,
) -> Result<ChamberBoundaries, CaseError> {
    let given = [[&raw.x_min, &raw.x_max], [&raw.y_min, &raw.y_max], [&raw.z_min, &raw.z_max]];
    let defaults =
        [[ChamberFace::Inlet, ChamberFace::Outlet], [ChamberFace::Wall; 2], [ChamberFace::Wall; 2]];
    let mut faces = defaults;
    // Line of each face: its own key, or the section header when defaulted.
    let mut spans: [[Option<Range<usize>>; 2]; 3] = Default::default();
    for a in 0..3 {
        for side in 0..2 {
            let key = format!("boundaries.{}", NAMES[a][side]);
            if let Some(value) = given[a][side] {
                let name = value.get_ref();
                faces[a][side] = face_by_name(name).ok_or_else(|| {
                    src.error(
                        &key,
                        Some(&value.span()),
                        format!(
                            "{key} = \"{name}\" is not a boundary type; use inlet, outlet, wall, symmetry, periodic or far_field"
                        ),
                    )
                })?;
                spans[a][side] = Some(value.span());
            } else {
                spans[a][side] = section.cloned();
            }
        }
    }
    let describe = |a: usize, side: usize| {
        let default = if given[a][side].is_none() { " (the default)" } else { "" };
        format!("boundaries.{} = \"{}\"{default}", NAMES[a][side], name_of(faces[a][side]))
    };
    let fail = |a: usize, side: usize, message: String| {
        src.error(&format!("boundaries.{}", NAMES[a][side]), spans[a][side].as_ref(), message)
    };

    for a in 0..3 {
        for side in 0..2 {
            let other = 1 - side;
            if faces[a][side] == ChamberFace::Periodic && faces[a][other] != ChamberFace::Periodic {
                return Err(fail(
                    a,
                    side,
                    format!(
                        "{} needs boundaries.{} = \"periodic\" too (periodic faces come in pairs), but {}",
                        describe(a, side),
                        NAMES[a][other],
                        describe(a, other)
                    ),
                ));
            }
            if faces[a][side] == ChamberFace::Inlet && (a, side) != (0, 0) {
                return Err(fail(
                    a,
                    side,
                    format!(
                        "{}: an inlet is only allowed on x_min (x is the mean-flow direction)",
                        describe(a, side)
                    ),
                ));
            }
            if faces[a][side] == ChamberFace::Outlet && (a, side) != (0, 1) {
                return Err(fail(
                    a,
                    side,
                    format!(
                        "{}: an outlet is only allowed on x_max (x is the mean-flow direction)",
                        describe(a, side)
                    ),
                ));
            }
        }
    }
    if faces[0][0] == ChamberFace::Inlet
        && !matches!(faces[0][1], ChamberFace::Outlet | ChamberFace::FarField)
    {
        return Err(fail(
            0,
            1,
            format!("{} needs an outlet or far_field opposite it, but {}", describe(0, 0), describe(0, 1)),
        ));
    }
    if mean_velocity > 0.0 {
        let closed = |f: ChamberFace| matches!(f, ChamberFace::Wall | ChamberFace::Symmetry);
        if faces.iter().flatten().all(|&f| closed(f)) {
            return Err(src.error(
                "boundaries",
                section,
                format!(
                    "flow.mean_velocity = {mean_velocity:e} m/s is positive but every chamber face is a wall or \
                     symmetry plane: there is no way for the flow to leave"
                ),
            ));
        }
        let enters =
            matches!(faces[0][0], ChamberFace::Inlet | ChamberFace::FarField | ChamberFace::Periodic);
        if !enters {
            return Err(fail(
                0,
                0,
                format!(
                    "flow.mean_velocity is positive but {}: the mean flow runs along +x and enters through x_min \
                     (use inlet, far_field or periodic)",
                    describe(0, 0)
                ),
            ));
        }
        let leaves =
            matches!(faces[0][1], ChamberFace::Outlet | ChamberFace::FarField | ChamberFace::Periodic);
        if !leaves {
            return Err(fail(
                0,
                1,
                format!(
                    "flow.mean_velocity is positive but {}: the mean flow runs along +x and leaves through x_max \
                     (use outlet, far_field or periodic)",
                    describe(0, 1)
                ),
            ));
        }
    }
    let far_field_sources = match &raw.far_field_sources {
        None => FarFieldSources::default(),
        Some(value) => match value.get_ref().as_str() {
            "cells" => FarFieldSources::Cells,
            "centroid" => FarFieldSources::Centroid,
            other => {
                return Err(src.error(
                    "boundaries.far_field_sources",
                    Some(&value.span()),
                    format!(
                        "boundaries.far_field_sources = \"{other}\" is not known; use \"cells\" (each cell's own \
                         point source) or \"centroid\" (one source at the secretion-weighted centroid)"
                    ),
                ))
            }
        },
    };
    Ok(ChamberBoundaries { faces, far_field_sources })
}
