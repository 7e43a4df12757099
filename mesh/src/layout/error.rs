//! Why a layout cannot be used. Lengths are printed in micrometres for readability; values are SI inside.

use std::path::PathBuf;

use super::micrometres;

#[derive(thiserror::Error, Debug)]
pub enum LayoutError {
    /// Two cells overlap or touch (`gap` = centre distance − sum of radii ≤ 0, m); `first == second` when a
    /// cell overlaps its own periodic image.
    #[error("cells {first} and {second} overlap or touch (surface gap {}); cells need a positive gap", micrometres(*gap))]
    Overlap { first: usize, second: usize, gap: f64 },
    /// A cell sticks out through a non-periodic chamber face.
    #[error("cell {id} crosses the chamber face {face}")]
    CrossesFace { id: usize, face: &'static str },
    /// Random sequential addition ran out of attempts.
    #[error(
        "random layout placed only {placed} of {requested} cells before its attempt budget ran out; \
         lower the count or volume fraction, the minimum gap, or enlarge the chamber"
    )]
    NotPackable { placed: usize, requested: usize },
    /// The request is beyond what any random packing holds: checked before anything is allocated.
    /// `fraction` counts each cell with half the minimum gap around it, in the volume such cells can occupy.
    #[error(
        "{requested} cells (with half the minimum gap around each) would fill {fraction:.3} of the space they can \
         occupy, beyond random close packing ({limit}); at most {max_count} fit: lower the count or volume \
         fraction or the minimum gap, or enlarge the space"
    )]
    BeyondClosePacking { requested: usize, fraction: f64, limit: f64, max_count: usize },
    /// The dense packing did not reach the request within its effort bound.
    #[error(
        "dense random packing of {requested} cells stalled at a volume fraction of {reached:.3} (with half the \
         minimum gap around each cell) short of the {fraction:.3} needed; lower the count or volume fraction \
         or the minimum gap, or enlarge the space"
    )]
    PackingStalled { requested: usize, fraction: f64, reached: f64 },
    /// A cell is too small for the grid to resolve its surface.
    #[error(
        "cell {id} of radius {} spans only {:.2} grid spacings of {}; at least 2.5 are needed",
        micrometres(*radius), radius / spacing, micrometres(*spacing)
    )]
    TooCoarse { id: usize, radius: f64, spacing: f64 },
    /// A layout file cannot be read or holds bad values.
    #[error("{}{}: {message}", path.display(), line.map(|l| format!(", line {l}")).unwrap_or_default())]
    Csv { path: PathBuf, line: Option<u64>, message: String },
    /// A non-physical parameter or value.
    #[error("invalid layout: {what}")]
    Invalid { what: String },
}
