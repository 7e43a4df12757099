//! The case file: units, raw TOML, validated case.
//!
//! Two stages (shared/STYLE.md item 7): [`raw::RawCase`] holds the file's syntax, key names and spans;
//! [`Case`] is the validated, physical case in SI units with the layout already generated. Every error names
//! the file, the line and the dotted key ([`CaseError`]).

mod boundaries;
pub mod bounded_read;
mod cells;
mod decompose;
mod error;
mod grid_fit;
pub mod raw;
pub mod source_map;
pub mod transient;
pub mod units;
mod validate;

#[cfg(test)]
mod readme_defaults;
#[cfg(test)]
mod tests;

use std::path::{Path, PathBuf};

use numkit::sha256_hex;

pub use cells::LayoutKind;
pub use error::CaseError;

/// How the ligand field is solved.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SolveMode {
    Steady,
    /// Time-dependent from an initial condition; parameters in [`SolveParams::transient`].
    Transient,
}

/// `[solve]`: mode and the linear-solver stopping rule.
#[derive(Clone, Debug, PartialEq)]
pub struct SolveParams {
    pub mode: SolveMode,
    /// Relative residual at which the iterative solves stop, in (0, 1e-2]; default 1e-8.
    pub tolerance: f64,
    /// Iteration cap of each iterative solve; default 300.
    pub max_iterations: usize,
    /// Present exactly when `mode` is transient.
    pub transient: Option<transient::TransientSolve>,
}

/// `[sensing]`: parameters of the per-cell sensing outputs.
#[derive(Clone, Debug, PartialEq)]
pub struct SensingParams {
    /// Time over which a cell counts bound molecules (s) for the counting-noise direction error; default 1 h.
    pub integration_time: f64,
    /// Which cells get the self/neighbour split; default `sample:4` (see `decompose.rs`).
    pub decompose: solver::post::decompose::DecomposeSelection,
    /// Direction error above which a cell counts as unable to read the flow direction; default 1.
    pub readable_error: f64,
    /// Slabs along x for the position-resolved statistics; default 8.
    pub position_bins: usize,
    /// Cells whose centre lies closer than this to the x_min or x_max face are left out of the
    /// statistics (m); default 0.
    pub statistics_margin: f64,
}

/// A field that `run` writes to `fields.h5`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OutputField {
    Concentration,
    Velocity,
    Pressure,
}

impl OutputField {
    pub const ALL: [OutputField; 3] =
        [OutputField::Concentration, OutputField::Velocity, OutputField::Pressure];

    /// Name as written in the case file.
    pub fn name(self) -> &'static str {
        match self {
            OutputField::Concentration => "concentration",
            OutputField::Velocity => "velocity",
            OutputField::Pressure => "pressure",
        }
    }
}

/// `[output]`: which fields are written and whether figures are drawn.
#[derive(Clone, Debug, PartialEq)]
pub struct OutputParams {
    /// Default: all three, in the order concentration, velocity, pressure.
    pub fields: Vec<OutputField>,
    /// Default true.
    pub figures: bool,
    /// `precision` (default double) and `compression` (deflate level, default 1) of the 3-D fields.
    pub storage: crate::io::FieldStorage,
}

/// A validated case, SI units throughout.
#[derive(Clone, Debug)]
pub struct Case {
    pub title: String,
    /// The path the case was loaded from (as given).
    pub source_path: PathBuf,
    /// The full text of the case file, for provenance.
    pub source_text: String,
    /// SHA-256 of the file bytes, lower-case hex.
    pub sha256: String,
    /// Chamber edge lengths (m); the chamber spans [0, size] along each axis.
    pub chamber_size: [f64; 3],
    /// Origin 0, spacing h, shape = size / h.
    pub grid: mesh::Grid,
    /// The key that set the grid spacing (`grid.spacing` or `grid.cells_per_radius`), for messages.
    pub grid_key: &'static str,
    pub boundaries: solver::problem::ChamberBoundaries,
    pub flow: solver::problem::FlowParameters,
    pub ligand: solver::problem::LigandParameters,
    /// Default radius of every cell (m).
    pub cell_radius: f64,
    /// Default secretion rate of every cell (molecules/s).
    pub secretion_rate: f64,
    /// The cells, generated and validated against the chamber.
    pub layout: mesh::Layout,
    pub layout_kind: LayoutKind,
    pub solve: SolveParams,
    pub sensing: SensingParams,
    pub output: OutputParams,
    /// Things the modeller should know but that do not stop a run (e.g. radius under 4 grid spacings).
    pub warnings: Vec<String>,
    /// Every file the case reads: the case file, a layout file, an initial field (an output folder must not
    /// hold them).
    pub input_files: Vec<std::path::PathBuf>,
}

impl Case {
    /// Read, parse and validate a case file. Relative paths inside it (layout files) are taken relative to the
    /// file's folder.
    pub fn load(path: &Path) -> Result<Case, CaseError> {
        use bounded_read::{read_bounded, TEXT_INPUT_LIMIT};
        let bytes = read_bounded(path, TEXT_INPUT_LIMIT, "case file")
            .map_err(|error| CaseError::Read { path: path.to_path_buf(), error: error.into() })?;
        let text = String::from_utf8(bytes).map_err(|_| CaseError::Syntax {
            path: path.to_path_buf(),
            key: None,
            line: None,
            message: "the file is not UTF-8 text".to_string(),
        })?;
        Case::parse(&text, path)
    }

    /// Parse and validate case text; `path` names the file in messages and anchors relative paths.
    pub fn parse(text: &str, path: &Path) -> Result<Case, CaseError> {
        let raw: raw::RawCase = toml::from_str(text).map_err(|e| syntax_error(&e, text, path))?;
        let mut case = validate::validate(raw, text, path)?;
        case.sha256 = sha256_hex(text.as_bytes());
        Ok(case)
    }
}

/// A TOML or serde error as one sentence that names the key (found from the error's span) and the line.
fn syntax_error(error: &toml::de::Error, text: &str, path: &Path) -> CaseError {
    let span = error.span();
    let line = span.as_ref().map(|s| source_map::line_of(text, s.start));
    let key = span.as_ref().and_then(|s| source_map::KeyMap::parse(text)?.path_at(s).map(str::to_string));
    let detail = error.message().trim().replace('\n', "; ");
    if let (Some(span), true) = (&span, detail.starts_with("duplicate key")) {
        let key = duplicated_key(text, span.clone());
        let message = format!("{key} is given twice; keep one");
        return CaseError::Syntax { path: path.to_path_buf(), key: Some(key), line, message };
    }
    let message = match (&key, detail.strip_prefix("unknown field ")) {
        (Some(key), Some(rest)) => {
            let expected = rest.split_once(", expected ").map(|(_, e)| e).unwrap_or("");
            if expected.is_empty() {
                format!("{key} is not a known key")
            } else {
                format!("{key} is not a known key (expected {expected})")
            }
        }
        (Some(key), None) => format!("{key}: {detail}"),
        (None, _) => format!("invalid TOML: {detail}"),
    };
    CaseError::Syntax { path: path.to_path_buf(), key, line, message }
}

/// The dotted name of the key written at `span` (a duplicate, which the key map cannot parse): the enclosing
/// `[table]` header, if any, and the key as written.
fn duplicated_key(text: &str, span: std::ops::Range<usize>) -> String {
    let at_span = text.get(span.clone()).unwrap_or("").trim();
    if at_span.starts_with('[') {
        return at_span.trim_matches(['[', ']']).trim().to_string();
    }
    let written = at_span.split('=').next().unwrap_or("").trim().trim_matches(['[', ']']).trim();
    let before = text.get(..span.start).unwrap_or("");
    let header = before
        .lines()
        .rev()
        .map(str::trim)
        .find(|l| l.starts_with('['))
        .map(|l| l.trim_start_matches('[').split(']').next().unwrap_or("").trim().to_string());
    match header {
        // The span may be the header itself (a table given twice).
        Some(h) if !h.is_empty() && h != written => format!("{h}.{written}"),
        _ => written.to_string(),
    }
}
