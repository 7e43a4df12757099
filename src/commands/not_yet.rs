//! Commands that are part of the interface (DESIGN.md §5) but not built yet: they say so plainly and exit 2,
//! rather than pretending to work.

use crate::exit::InputError;

/// Refuse `plumefield <command>` with "plumefield <command> is not implemented yet".
pub fn execute(command: &str) -> anyhow::Result<()> {
    Err(InputError(format!("plumefield {command} is not implemented yet")).into())
}
