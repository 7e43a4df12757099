//! Memory and time forecast of one steady case, for `sweep --plan` and the Slurm resource requests.
//!
//! Both grow linearly with the number of grid cells (multigrid-preconditioned solves, DESIGN.md §3). The
//! constants were measured with `plumefield run --threads 1` on the development machine (release build):
//! the demo case (200×100×50 = 1.0e6 grid cells, 300 cells) peaked at 573 MB resident and took 5.9 s; a
//! 48×24×16 case peaked at 24.6 MB and took 0.14 s;
//! the constants below are the straight line through these two points. Measured again later (Brinkman and
//! decomposition code in, machine loaded by other builds): 590 MB and 6.5 s for the demo, within 3% and 10%.
//! The model is calibrated on Darcy cases; Brinkman/Stokes flow solves cost more. They are a forecast, not a bound: the Slurm script adds
//! headroom on top (see `slurm.rs`).

use crate::case::Case;

/// Resident memory that does not scale with the grid (program, HDF5 library, small buffers), bytes.
const BASE_BYTES: f64 = 14.0e6;
/// Resident memory per grid cell, bytes (geometry, flow, transport, multigrid hierarchy, Krylov vectors).
const BYTES_PER_GRID_CELL: f64 = 560.0;
/// Extra resident memory per grid cell for each thread beyond the first (per-thread work buffers), bytes:
/// the demo case peaked at 590 MB on one thread and 677 MB on two (measured again after the decomposition and
/// Brinkman work landed; one pair of runs, so a rough slope).
const BYTES_PER_GRID_CELL_PER_EXTRA_THREAD: f64 = 87.0;
/// Fixed cost of a run (start-up, file writes), seconds.
const BASE_SECONDS: f64 = 0.03;
/// Wall time per grid cell on one thread, seconds.
const SECONDS_PER_GRID_CELL: f64 = 5.9e-6;
/// Parallel efficiency assumed for the threads of one case (common practice for memory-bound stencils).
const THREAD_EFFICIENCY: f64 = 0.7;

/// What one case is expected to need.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Forecast {
    /// Grid cells of the case.
    pub grid_cells: usize,
    /// Peak resident memory, bytes.
    pub memory_bytes: f64,
    /// Wall time on one thread, seconds.
    pub seconds_one_thread: f64,
}

impl Forecast {
    /// Forecast for a validated case.
    pub fn of(case: &Case) -> Forecast {
        Forecast::for_grid_cells(case.grid.len())
    }

    pub fn for_grid_cells(grid_cells: usize) -> Forecast {
        let n = grid_cells as f64;
        Forecast {
            grid_cells,
            memory_bytes: BASE_BYTES + BYTES_PER_GRID_CELL * n,
            seconds_one_thread: BASE_SECONDS + SECONDS_PER_GRID_CELL * n,
        }
    }

    /// Peak resident memory on `threads` threads, bytes.
    pub fn memory_bytes_on(&self, threads: usize) -> f64 {
        self.memory_bytes
            + BYTES_PER_GRID_CELL_PER_EXTRA_THREAD * (threads.max(1) - 1) as f64 * self.grid_cells as f64
    }

    /// Wall time on `threads` threads, seconds.
    pub fn seconds(&self, threads: usize) -> f64 {
        let speedup = 1.0 + (threads.max(1) as f64 - 1.0) * THREAD_EFFICIENCY;
        self.seconds_one_thread / speedup
    }
}

/// `1.2 GB`, `350 MB`, `24 MB`.
pub fn format_bytes(bytes: f64) -> String {
    if bytes >= 1e9 {
        format!("{:.1} GB", bytes / 1e9)
    } else {
        format!("{:.0} MB", (bytes / 1e6).max(1.0))
    }
}

/// `0.4 s`, `12 s`, `3.5 min`, `2.1 h`.
pub fn format_seconds(seconds: f64) -> String {
    if seconds < 10.0 {
        format!("{seconds:.1} s")
    } else if seconds < 120.0 {
        format!("{seconds:.0} s")
    } else if seconds < 7200.0 {
        format!("{:.1} min", seconds / 60.0)
    } else {
        format!("{:.1} h", seconds / 3600.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn forecast_reproduces_the_calibration_runs() {
        // The two measured runs named in the module doc, within 5%.
        let demo = Forecast::for_grid_cells(200 * 100 * 50);
        assert!((demo.memory_bytes / 573e6 - 1.0).abs() < 0.05, "{}", demo.memory_bytes);
        assert!((demo.seconds_one_thread / 5.9 - 1.0).abs() < 0.05, "{}", demo.seconds_one_thread);
        let tiny = Forecast::for_grid_cells(48 * 24 * 16);
        assert!((tiny.memory_bytes / 24.6e6 - 1.0).abs() < 0.05, "{}", tiny.memory_bytes);
        assert!((tiny.seconds_one_thread / 0.14 - 1.0).abs() < 0.05, "{}", tiny.seconds_one_thread);
        assert!(demo.seconds(2) < demo.seconds(1));
        assert!((demo.memory_bytes_on(2) / 677e6 - 1.0).abs() < 0.05, "{}", demo.memory_bytes_on(2));
    }

    #[test]
    fn formats() {
        assert_eq!(format_bytes(573e6), "573 MB");
        assert_eq!(format_bytes(2.5e9), "2.5 GB");
        assert_eq!(format_seconds(0.43), "0.4 s");
        assert_eq!(format_seconds(600.0), "10.0 min");
    }
}
