//! Errors of the case file. Each one is a single sentence that names the file, the line and the dotted key,
//! e.g. `case.toml line 12: cells.radius = "8 s" is a time, expected a length`.

use std::path::PathBuf;

/// Why a case file cannot be used. All variants are user input errors (exit code 2).
#[derive(Debug, thiserror::Error)]
pub enum CaseError {
    /// The file cannot be read.
    #[error("cannot read case file {}: {error}", path.display())]
    Read { path: PathBuf, error: std::io::Error },
    /// Not valid TOML, or a value of the wrong TOML type; `message` names the key where it is known.
    #[error("{}: {message}", location(path, *line))]
    Syntax { path: PathBuf, key: Option<String>, line: Option<usize>, message: String },
    /// A key with a bad, missing or unsupported value; `message` is a sentence that starts with the key.
    #[error("{}: {message}", location(path, *line))]
    Invalid { path: PathBuf, key: String, line: Option<usize>, message: String },
    /// The cells described under `key` do not form a valid layout (overlap, crossing a face, ...).
    #[error("{}: {key} does not give a usable layout", location(path, *line))]
    Layout {
        path: PathBuf,
        key: String,
        line: Option<usize>,
        #[source]
        source: Box<mesh::layout::LayoutError>,
    },
}

impl CaseError {
    /// The dotted key the error is about, when there is one.
    pub fn key(&self) -> Option<&str> {
        match self {
            CaseError::Read { .. } => None,
            CaseError::Syntax { key, .. } => key.as_deref(),
            CaseError::Invalid { key, .. } | CaseError::Layout { key, .. } => Some(key),
        }
    }

    /// The 1-based line in the case file, when known.
    pub fn line(&self) -> Option<usize> {
        match self {
            CaseError::Read { .. } => None,
            CaseError::Syntax { line, .. }
            | CaseError::Invalid { line, .. }
            | CaseError::Layout { line, .. } => *line,
        }
    }
}

fn location(path: &std::path::Path, line: Option<usize>) -> String {
    match line {
        Some(line) => format!("{} line {line}", path.display()),
        None => format!("{}", path.display()),
    }
}
