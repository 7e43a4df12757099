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

/// The error chain as one line: the messages joined by ": ", with no line breaks; an HDF5 library error is
/// told by its cause (the operating system's words for a failed write), not by the library's call stack.
pub fn one_line(error: &anyhow::Error) -> String {
    let parts: Vec<String> = error
        .chain()
        .map(|cause| match cause.downcast_ref::<hdf5::Error>() {
            Some(h5) => hdf5_cause(&h5.to_string()),
            None => cause.to_string(),
        })
        .map(|text| text.replace('\n', " "))
        .collect();
    parts.join(": ")
}

/// The cause in an HDF5 error text: `errno = N` as the system's message ("File too large (os error 27)"),
/// else the text without the library's function names (`H5Fclose(): `).
fn hdf5_cause(text: &str) -> String {
    let errno = text
        .split("errno = ")
        .nth(1)
        .and_then(|rest| rest.split(|c: char| !c.is_ascii_digit()).next())
        .and_then(|n| n.parse::<i32>().ok());
    if let Some(code) = errno {
        return std::io::Error::from_raw_os_error(code).to_string();
    }
    text.split(": ")
        .filter(|part| !(part.starts_with("H5") && part.ends_with("()")))
        .collect::<Vec<_>>()
        .join(": ")
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

    #[test]
    fn hdf5_errors_are_told_by_their_cause() {
        let stack = "H5C_dest(): set slist enabled failed: file write failed: time = Sat Dec  5 2026 , \
                     filename = 'x.tmp', file descriptor = 3, errno = 27, error message = 'File too large'";
        assert_eq!(hdf5_cause(stack), std::io::Error::from_raw_os_error(27).to_string());
        assert_eq!(hdf5_cause("H5Fclose(): H5F_close(): cannot close file"), "cannot close file");
    }
}
