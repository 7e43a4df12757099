//! `[sensing] decompose`: which cells get the self/neighbour split (`solver::post::decompose`).
//!
//! `"all"`, `"none"`, `"sample:N"` (N cells spread evenly over the layout order) or a list of cell ids. Each
//! chosen cell costs one more steady solve, so the default is the cheap `"sample:4"` (every cell when the
//! layout has four or fewer).

use std::ops::Range;

use solver::post::decompose::DecomposeSelection;
use toml::Spanned;

use super::validate::Source;
use super::CaseError;

/// Number of cells split when the case does not say.
pub const DEFAULT_SAMPLE: usize = 4;

/// The selection; listed ids are checked against the layout's `cell_count` here, before anything is solved.
pub(super) fn validate_decompose(
    src: &Source,
    value: Option<&Spanned<toml::Value>>,
    cell_count: usize,
) -> Result<DecomposeSelection, CaseError> {
    let Some(value) = value else { return Ok(DecomposeSelection::Sample(DEFAULT_SAMPLE)) };
    let span: Range<usize> = value.span();
    let key = "sensing.decompose";
    let usage = "use \"all\", \"none\", \"sample:N\" or a list of cell ids such as [0, 5, 12]";
    match value.get_ref() {
        toml::Value::String(text) => {
            let text = text.trim();
            match text {
                "all" => Ok(DecomposeSelection::All),
                "none" => Ok(DecomposeSelection::None),
                _ => {
                    let n = text
                        .strip_prefix("sample:")
                        .and_then(|n| n.trim().parse::<usize>().ok())
                        .filter(|&n| n >= 1)
                        .ok_or_else(|| {
                            src.error(
                                key,
                                Some(&span),
                                format!("{key} = \"{text}\" is not a selection; {usage}"),
                            )
                        })?;
                    Ok(DecomposeSelection::Sample(n))
                }
            }
        }
        toml::Value::Array(items) => {
            let mut ids = Vec::with_capacity(items.len());
            for (i, item) in items.iter().enumerate() {
                match item.as_integer() {
                    Some(id) if id >= 0 && (id as u64) < cell_count as u64 => ids.push(id as usize),
                    Some(id) if id >= 0 => {
                        let last = match cell_count {
                            0 => "it has no cells".to_string(),
                            n => format!("ids 0 to {}", n - 1),
                        };
                        return Err(src.error(
                            &format!("{key}[{i}]"),
                            Some(&span),
                            format!(
                                "{key}[{i}] = {id} is not a cell of the layout ({cell_count} cells, {last})"
                            ),
                        ));
                    }
                    _ => {
                        return Err(src.error(
                            &format!("{key}[{i}]"),
                            Some(&span),
                            format!("{key}[{i}] = {item} is not a cell id (a whole number from 0)"),
                        ))
                    }
                }
            }
            Ok(DecomposeSelection::Cells(ids))
        }
        other => Err(src.error(key, Some(&span), format!("{key} = {other} is not a selection; {usage}"))),
    }
}
