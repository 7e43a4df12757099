//! What the benchmark drivers of plumefield share: the process meters as the drivers report them. The
//! drivers (`src/bin/`) are laboratory tools, not part of the shipped program; their results go to
//! `bench/RECORDS.md`.

use numkit::meter;

/// User + system CPU seconds of this process, exited threads included (0 where `/proc` is unavailable).
pub fn process_cpu_seconds() -> f64 {
    meter::process_cpu_seconds().unwrap_or(0.0)
}

/// CPU seconds of the live threads of this process, nanosecond resolution (NaN where unavailable). On a
/// shared machine the CPU time of a one-thread run is a steadier measure than the wall time.
pub fn thread_cpu_seconds() -> f64 {
    meter::process_thread_cpu_seconds().unwrap_or(f64::NAN)
}

/// The 1, 5 and 15 minute load averages, or "unknown".
pub fn load_average() -> String {
    meter::load_average().unwrap_or_else(|| "unknown".to_string())
}
