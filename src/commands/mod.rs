//! One file (or folder) per command: the command-line shell in `main.rs` parses flags and calls these.

pub mod collect;
pub mod estimate;
pub mod layout;
pub mod memory_budget;
pub mod plot;
pub mod run;
pub mod sweep;
pub mod sweep_find;
pub mod verify;

/// Refuses (exit code 2) a thread or job count of 0 or more than this machine can use: 4 per core (a
/// thousand threads would take seconds only to start).
pub fn check_thread_count(option: &str, n: usize) -> Result<(), crate::exit::InputError> {
    let cores = std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1);
    let most = 4 * cores;
    if n == 0 {
        Err(crate::exit::InputError(format!("{option} must be at least 1")))
    } else if n > most {
        Err(crate::exit::InputError(format!(
            "{option} {n} is more than this machine can use ({cores} cores); give at most {most}"
        )))
    } else {
        Ok(())
    }
}
