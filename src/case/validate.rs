//! From [`RawCase`] to [`Case`]: units to SI, required keys, ranges, and the choices the code does not
//! implement yet (refused plainly, never ignored). Chamber/grid fitting, boundaries and cells have their own
//! files beside this one.

use std::fmt::Display;
use std::ops::Range;
use std::path::Path;

use toml::Spanned;

use super::raw::{RawCase, RawLigand, RawMedium, RawNumber, RawOutput, RawSensing, RawSolve};
use super::source_map::line_of;
use super::units::{parse_quantity, Dimension, UnitError};
use super::{Case, CaseError, OutputField, OutputParams, SensingParams, SolveMode, SolveParams};
use crate::io::{FieldStorage, Precision};
use solver::problem::{FlowParameters, LigandParameters, MediumModel, SurfaceUptake};

/// The case text and file name, to turn spans into line numbers in errors.
pub(super) struct Source<'a> {
    pub path: &'a Path,
    pub text: &'a str,
}

/// What a numeric key accepts besides its dimension.
#[derive(Clone, Copy, PartialEq)]
pub(super) enum Range0 {
    /// > 0
    Positive,
    /// ≥ 0
    NonNegative,
    /// any finite value
    Any,
}

impl Source<'_> {
    pub fn line(&self, span: &Range<usize>) -> usize {
        line_of(self.text, span.start)
    }

    /// An error about `key`; `message` is the full sentence (it starts with the key).
    pub fn error(&self, key: &str, span: Option<&Range<usize>>, message: impl Display) -> CaseError {
        CaseError::Invalid {
            path: self.path.to_path_buf(),
            key: key.to_string(),
            line: span.map(|s| self.line(s)),
            message: message.to_string(),
        }
    }

    /// A required key that is absent; `section` is the span of its table, if the table exists.
    pub fn missing(&self, key: &str, section: Option<&Range<usize>>, what: &str) -> CaseError {
        self.error(key, section, format!("{key} is missing ({what})"))
    }

    /// Convert a value to SI, checking its dimension, finiteness and sign.
    pub fn quantity(
        &self,
        key: &str,
        value: &Spanned<RawNumber>,
        expected: Dimension,
        range: Range0,
    ) -> Result<f64, CaseError> {
        let span = value.span();
        let raw = value.get_ref();
        let si = match raw {
            RawNumber::Si(v) => *v,
            RawNumber::Text(text) => {
                let parsed = match parse_quantity(text) {
                    // A dimensionless key may be given as a plain number in a string.
                    Err(UnitError::NoUnit) if expected == Dimension::DIMENSIONLESS => text
                        .trim()
                        .parse::<f64>()
                        .map_err(|_| UnitError::NoNumber)
                        .map(|si| super::units::Quantity { si, dimension: Dimension::DIMENSIONLESS }),
                    other => other,
                };
                let quantity =
                    parsed.map_err(|e| self.error(key, Some(&span), format!("{key} = {raw} {e}")))?;
                if quantity.dimension != expected {
                    return Err(self.error(
                        key,
                        Some(&span),
                        format!(
                            "{key} = {raw} is {}, expected {}",
                            quantity.dimension.describe(),
                            expected.describe()
                        ),
                    ));
                }
                quantity.si
            }
        };
        if !si.is_finite() {
            return Err(self.error(key, Some(&span), format!("{key} = {raw} is not a finite number")));
        }
        let bad = match range {
            Range0::Positive => (si <= 0.0).then_some("must be positive"),
            Range0::NonNegative => (si < 0.0).then_some("must not be negative"),
            Range0::Any => None,
        };
        if let Some(rule) = bad {
            return Err(self.error(key, Some(&span), format!("{key} = {raw} {rule}")));
        }
        Ok(si)
    }

    /// Like [`Source::quantity`] for an optional key with a default (SI).
    pub fn quantity_or(
        &self,
        key: &str,
        value: Option<&Spanned<RawNumber>>,
        expected: Dimension,
        range: Range0,
        default: f64,
    ) -> Result<f64, CaseError> {
        value.map_or(Ok(default), |v| self.quantity(key, v, expected, range))
    }

    /// A required quantity.
    pub fn required(
        &self,
        key: &str,
        value: Option<&Spanned<RawNumber>>,
        section: Option<&Range<usize>>,
        expected: Dimension,
        range: Range0,
        example: &str,
    ) -> Result<f64, CaseError> {
        match value {
            Some(v) => self.quantity(key, v, expected, range),
            None => Err(self.missing(key, section, &format!("{}, e.g. {example}", expected.describe()))),
        }
    }

    /// A whole number ≥ `min` given as a TOML number (or a plain number in a string).
    pub fn whole_number(
        &self,
        key: &str,
        value: &Spanned<RawNumber>,
        min: usize,
    ) -> Result<usize, CaseError> {
        let x = self.quantity(key, value, Dimension::DIMENSIONLESS, Range0::Any)?;
        if x.fract() != 0.0 || x < min as f64 || x > 1e15 {
            return Err(self.error(
                key,
                Some(&value.span()),
                format!("{key} = {} must be a whole number of at least {min}", value.get_ref()),
            ));
        }
        Ok(x as usize)
    }
}

/// A section table and its span (`None` when the section is absent: then every key takes its default or is
/// reported missing without a line).
fn section<T: Default>(value: Option<Spanned<T>>) -> (T, Option<Range<usize>>) {
    match value {
        Some(v) => {
            let span = v.span();
            (v.into_inner(), Some(span))
        }
        None => (T::default(), None),
    }
}

pub(super) fn validate(raw: RawCase, text: &str, path: &Path) -> Result<Case, CaseError> {
    let src = Source { path, text };
    let title = match raw.title {
        Some(t) if t.get_ref().trim().is_empty() => {
            return Err(src.error("title", Some(&t.span()), "title is empty"));
        }
        Some(t) => t.into_inner(),
        None => path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "case".into()),
    };

    // The medium comes first: an unimplemented model is the most useful thing to say.
    let (medium, medium_span) = section(raw.medium);
    let medium_model = validate_medium(&src, &medium, medium_span.as_ref())?;

    let (flow, flow_span) = section(raw.flow);
    let mean_velocity = src.required(
        "flow.mean_velocity",
        flow.mean_velocity.as_ref(),
        flow_span.as_ref(),
        Dimension::VELOCITY,
        Range0::NonNegative,
        "\"2 um/s\" (0 for no flow)",
    )?;

    let (boundaries, boundaries_span) = section(raw.boundaries);
    let boundaries =
        super::boundaries::validate_boundaries(&src, &boundaries, boundaries_span.as_ref(), mean_velocity)?;

    let (ligand, ligand_span) = section(raw.ligand);
    let (cells, cells_span) = section(raw.cells);
    let cell_defaults = super::cells::validate_cell_defaults(&src, &cells, cells_span.as_ref())?;
    let ligand = validate_ligand(&src, &ligand, ligand_span.as_ref(), cell_defaults.uptake)?;

    let (chamber, chamber_span) = section(raw.chamber);
    let (grid, grid_span) = section(raw.grid);
    let fitted = super::grid_fit::fit_grid(
        &src,
        &chamber,
        chamber_span.as_ref(),
        &grid,
        grid_span.as_ref(),
        cell_defaults.radius,
    )?;

    let mut warnings = Vec::new();
    if let MediumModel::Darcy { .. } = medium_model {
        if let Some(v) = &medium.effective_viscosity {
            warnings.push(format!(
                "{} line {}: medium.effective_viscosity is not used by the darcy model (it has no viscous term)",
                path.display(),
                src.line(&v.span())
            ));
        }
    }

    let chamber_box = mesh::layout::ChamberBox {
        lower: [0.0; 3],
        upper: fitted.size,
        periodic: boundaries.periodic_axes(),
    };
    let layout_file = cells
        .layout
        .as_ref()
        .and_then(|l| l.get_ref().path.as_ref())
        .map(|p| path.parent().unwrap_or(Path::new("")).join(p.get_ref()));
    let setting = super::cells::LayoutSetting {
        chamber: &chamber_box,
        spacing: fitted.grid.spacing,
        faces: &boundaries.faces,
    };
    let placed = super::cells::build_layout(&src, &cells, cells_span.as_ref(), &cell_defaults, &setting)?;
    let resolution = super::cells::check_resolution(&src, &placed, fitted.grid.spacing)?;
    warnings.extend(resolution);

    let (raw_solve, solve_span) = section(raw.solve);
    let mut solve = validate_solve(&src, &raw_solve)?;
    let (raw_sensing, _) = section(raw.sensing);
    let mut sensing = validate_sensing(&src, &raw_sensing, fitted.size[0], placed.layout.cells.len())?;
    if solve.mode == SolveMode::Transient {
        if raw_sensing.decompose.is_none() {
            // Each split cell costs a whole time integration more: a transient run splits only when asked.
            sensing.decompose = solver::post::decompose::DecomposeSelection::None;
        }
        let case_dir = path.parent().unwrap_or(Path::new("."));
        solve.transient = Some(super::transient::validate_transient(
            &src,
            &raw_solve,
            solve_span.as_ref(),
            &raw_sensing,
            &cells,
            &flow,
            placed.layout.cells.len(),
            case_dir,
        )?);
    } else if let Some((key, span)) =
        super::transient::transient_only_keys(&raw_solve, &raw_sensing, &cells, &flow).into_iter().next()
    {
        return Err(src.error(
            &key,
            Some(&span),
            format!("{key} is only used when solve.mode = \"transient\""),
        ));
    }
    let (output, _) = section(raw.output);
    let output = validate_output(&src, &output)?;
    let mut input_files = vec![path.to_path_buf()];
    input_files.extend(layout_file);
    if let Some(super::transient::InitialCondition::Fields(p)) = solve.transient.as_ref().map(|t| &t.initial)
    {
        input_files.push(p.clone());
    }

    Ok(Case {
        title,
        source_path: path.to_path_buf(),
        source_text: text.to_string(),
        sha256: String::new(),
        chamber_size: fitted.size,
        grid: fitted.grid,
        grid_key: fitted.key,
        boundaries,
        flow: FlowParameters { medium: medium_model, mean_velocity },
        ligand,
        cell_radius: cell_defaults.radius,
        secretion_rate: cell_defaults.secretion_rate,
        layout: placed.layout,
        layout_kind: placed.kind,
        solve,
        sensing,
        output,
        warnings,
        input_files,
    })
}

/// `[medium]`: the flow model and its coefficients (`permeability` is not needed by Stokes flow).
fn validate_medium(
    src: &Source,
    medium: &RawMedium,
    span: Option<&Range<usize>>,
) -> Result<MediumModel, CaseError> {
    let Some(model) = &medium.model else {
        return Err(src.missing("medium.model", span, "\"darcy\", \"brinkman\" or \"stokes\""));
    };
    let model_span = model.span();
    let name = model.get_ref().as_str();
    if !matches!(name, "darcy" | "brinkman" | "stokes") {
        return Err(src.error(
            "medium.model",
            Some(&model_span),
            format!(
                "medium.model = \"{name}\" is not a flow model; use \"darcy\", \"brinkman\" or \"stokes\""
            ),
        ));
    }
    let viscosity = src.required(
        "medium.viscosity",
        medium.viscosity.as_ref(),
        span,
        Dimension::VISCOSITY,
        Range0::Positive,
        "\"1e-3 Pa s\"",
    )?;
    let permeability = if name == "stokes" {
        // Not used by Stokes flow; a given value is still checked for its unit.
        match medium.permeability.as_ref() {
            Some(v) => Some(src.quantity("medium.permeability", v, Dimension::AREA, Range0::Positive)?),
            None => None,
        }
    } else {
        Some(src.required(
            "medium.permeability",
            medium.permeability.as_ref(),
            span,
            Dimension::AREA,
            Range0::Positive,
            "\"1e-13 m^2\"",
        )?)
    };
    // Parsed for every model, so that a wrong unit is reported even where the model does not use it.
    let effective_viscosity = src.quantity_or(
        "medium.effective_viscosity",
        medium.effective_viscosity.as_ref(),
        Dimension::VISCOSITY,
        Range0::Positive,
        viscosity,
    )?;
    Ok(match (name, permeability) {
        ("brinkman", Some(permeability)) => {
            MediumModel::Brinkman { viscosity, permeability, effective_viscosity }
        }
        ("darcy", Some(permeability)) => MediumModel::Darcy { viscosity, permeability },
        _ => MediumModel::Stokes { viscosity },
    })
}

/// `[ligand]`: transport coefficients; the surface uptake comes from `[cells]`.
fn validate_ligand(
    src: &Source,
    ligand: &RawLigand,
    span: Option<&Range<usize>>,
    uptake: SurfaceUptake,
) -> Result<LigandParameters, CaseError> {
    let diffusivity = src.required(
        "ligand.diffusivity",
        ligand.diffusivity.as_ref(),
        span,
        Dimension::DIFFUSIVITY,
        Range0::Positive,
        "\"1e-10 m^2/s\"",
    )?;
    let decay_rate = src.quantity_or(
        "ligand.decay_rate",
        ligand.decay_rate.as_ref(),
        Dimension::RATE,
        Range0::NonNegative,
        0.0,
    )?;
    let inlet_concentration = src.quantity_or(
        "ligand.inlet_concentration",
        ligand.inlet_concentration.as_ref(),
        Dimension::CONCENTRATION,
        Range0::NonNegative,
        0.0,
    )?;
    Ok(LigandParameters { diffusivity, decay_rate, inlet_concentration, uptake })
}

/// `[solve]`: the mode and the linear-solver keys; the transient keys are checked in `transient.rs`.
fn validate_solve(src: &Source, solve: &RawSolve) -> Result<SolveParams, CaseError> {
    let mut mode_value = SolveMode::Steady;
    if let Some(mode) = &solve.mode {
        match mode.get_ref().as_str() {
            "steady" => {}
            "transient" => mode_value = SolveMode::Transient,
            other => {
                return Err(src.error(
                    "solve.mode",
                    Some(&mode.span()),
                    format!("solve.mode = \"{other}\" is not a solve mode; use \"steady\" or \"transient\""),
                ))
            }
        }
    }
    if mode_value == SolveMode::Steady {
        for (key, value) in [
            ("solve.end_time", &solve.end_time),
            ("solve.time_step", &solve.time_step),
            ("solve.output_every", &solve.output_every),
        ] {
            if let Some(v) = value {
                // Check the unit first so that a typo is reported as such.
                src.quantity(key, v, Dimension::TIME, Range0::Positive)?;
            }
        }
    }
    let tolerance = src.quantity_or(
        "solve.tolerance",
        solve.tolerance.as_ref(),
        Dimension::DIMENSIONLESS,
        Range0::Positive,
        1e-8,
    )?;
    if tolerance > 1e-2 {
        let span = solve.tolerance.as_ref().map(|v| v.span());
        return Err(src.error(
            "solve.tolerance",
            span.as_ref(),
            format!("solve.tolerance = {tolerance} is too loose; use a value in (0, 1e-2]"),
        ));
    }
    let max_iterations = match &solve.max_iterations {
        Some(v) => src.whole_number("solve.max_iterations", v, 1)?,
        None => 300,
    };
    Ok(SolveParams { mode: mode_value, tolerance, max_iterations, transient: None })
}

/// More slabs than this would say nothing a per-cell table does not.
const MAX_POSITION_BINS: usize = 1000;

/// `[sensing]`
fn validate_sensing(
    src: &Source,
    sensing: &RawSensing,
    chamber_length: f64,
    cell_count: usize,
) -> Result<SensingParams, CaseError> {
    let integration_time = src.quantity_or(
        "sensing.integration_time",
        sensing.integration_time.as_ref(),
        Dimension::TIME,
        Range0::Positive,
        3600.0,
    )?;
    let decompose = super::decompose::validate_decompose(src, sensing.decompose.as_ref(), cell_count)?;
    let readable_error = src.quantity_or(
        "sensing.readable_error",
        sensing.readable_error.as_ref(),
        Dimension::DIMENSIONLESS,
        Range0::Positive,
        1.0,
    )?;
    let position_bins = match &sensing.position_bins {
        Some(v) => {
            let bins = src.whole_number("sensing.position_bins", v, 1)?;
            if bins > MAX_POSITION_BINS {
                return Err(src.error(
                    "sensing.position_bins",
                    Some(&v.span()),
                    format!("sensing.position_bins = {bins} is more than {MAX_POSITION_BINS} slabs"),
                ));
            }
            bins
        }
        None => 8,
    };
    let statistics_margin = src.quantity_or(
        "sensing.statistics_margin",
        sensing.statistics_margin.as_ref(),
        Dimension::LENGTH,
        Range0::NonNegative,
        0.0,
    )?;
    if let Some(v) = sensing.statistics_margin.as_ref().filter(|_| 2.0 * statistics_margin >= chamber_length)
    {
        return Err(src.error(
            "sensing.statistics_margin",
            Some(&v.span()),
            format!(
                "sensing.statistics_margin = {} leaves no part of the chamber (its x length is {chamber_length:e} m)",
                v.get_ref()
            ),
        ));
    }
    Ok(SensingParams { integration_time, decompose, readable_error, position_bins, statistics_margin })
}

/// `[output]`
fn validate_output(src: &Source, output: &RawOutput) -> Result<OutputParams, CaseError> {
    let fields = match &output.fields {
        None => OutputField::ALL.to_vec(),
        Some(list) => {
            let mut fields = Vec::new();
            for (i, name) in list.get_ref().iter().enumerate() {
                let key = format!("output.fields[{i}]");
                let field = OutputField::ALL.into_iter().find(|f| f.name() == name.get_ref()).ok_or_else(|| {
                    src.error(
                        &key,
                        Some(&name.span()),
                        format!(
                            "{key} = \"{}\" is not an output field; use \"concentration\", \"velocity\" or \"pressure\"",
                            name.get_ref()
                        ),
                    )
                })?;
                if fields.contains(&field) {
                    return Err(src.error(
                        &key,
                        Some(&name.span()),
                        format!("{key} = \"{}\" is listed twice", field.name()),
                    ));
                }
                fields.push(field);
            }
            fields
        }
    };
    let figures = output.figures.as_ref().map_or(true, |f| *f.get_ref());
    let mut storage = FieldStorage::default();
    if let Some(p) = &output.precision {
        storage.precision = match p.get_ref().as_str() {
            "single" => Precision::Single,
            "double" => Precision::Double,
            other => {
                return Err(src.error(
                    "output.precision",
                    Some(&p.span()),
                    format!(
                        "output.precision = \"{other}\" is not a precision; use \"single\" or \"double\""
                    ),
                ))
            }
        };
    }
    if let Some(level) = &output.compression {
        let n = src.whole_number("output.compression", level, 0)?;
        if n > 9 {
            return Err(src.error(
                "output.compression",
                Some(&level.span()),
                format!(
                    "output.compression = {n} is not a deflate level; use 0 (none) to 9 (smallest files)"
                ),
            ));
        }
        storage.compression = n as u8;
    }
    Ok(OutputParams { fields, figures, storage })
}
