//! Exit codes and the one-sentence error line of the command-line program.
//!
//! 0 success; 2 bad input (case file, layout, command-line values); 1 anything else (a solver that fails to
//! converge or produces non-finite values, an I/O failure). DESIGN.md §5.

use crate::case::CaseError;
use mesh::layout::LayoutError;

/// Exit code for success.
pub const SUCCESS: i32 = 0;
/// Exit code for a solver or I/O failure.
pub const FAILURE: i32 = 1;
/// Exit code for bad user input.
pub const BAD_INPUT: i32 = 2;

/// A user mistake that is not in a case file (a command-line value, a missing file named on the command line,
/// a command that does not exist yet).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct InputError(pub String);

/// A numerical failure: divergence, stagnation, non-finite values.
#[derive(Debug, thiserror::Error)]
#[error("{message}")]
pub struct SolverFailure {
    pub message: String,
}

/// Exit code for an error: 2 if anything in its chain is bad input, 1 otherwise.
pub fn exit_code(error: &anyhow::Error) -> i32 {
    let bad_input = error.chain().any(|cause| {
        cause.downcast_ref::<CaseError>().is_some()
            || cause.downcast_ref::<LayoutError>().is_some()
            || cause.downcast_ref::<InputError>().is_some()
    });
    if bad_input {
        BAD_INPUT
    } else {
        FAILURE
    }
}

/// The error chain as one line: the messages joined by ": ", with no line breaks.
pub fn one_line(error: &anyhow::Error) -> String {
    let parts: Vec<String> = error.chain().map(|cause| cause.to_string().replace('\n', " ")).collect();
    parts.join(": ")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_follow_the_chain() {
        let input = anyhow::Error::new(InputError("bad".into())).context("while loading");
        assert_eq!(exit_code(&input), BAD_INPUT);
        assert_eq!(one_line(&input), "while loading: bad");
        let layout = anyhow::Error::new(LayoutError::Invalid { what: "x".into() });
        assert_eq!(exit_code(&layout), BAD_INPUT);
        let solver = anyhow::Error::new(SolverFailure { message: "diverged".into() });
        assert_eq!(exit_code(&solver), FAILURE);
        let io = anyhow::Error::new(std::io::Error::other("disk full"));
        assert_eq!(exit_code(&io), FAILURE);
    }
}
