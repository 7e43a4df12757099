//! The one memory and run-time model of a steady case: `plumefield estimate` prints it, `sweep --plan` lists
//! it per case, and the Slurm scripts size `--mem` and `--time` from it (with headroom, see `slurm.rs`).
//!
//! Memory and time grow linearly with the number of grid cells (multigrid-preconditioned solves, DESIGN.md
//! §3); the self/neighbour split adds one transport solve per decomposed cell (`[sensing] decompose`).
//! Calibration (release build, `plumefield run --threads 1`, CPU time by `perf stat` so that the load other
//! programs put on the shared development machine does not count; measured 2026-12-02, load average ~10):
//! - cases/demo.toml (200×100×50 = 1.0e6 grid cells, 300 cells) with `decompose = "none"`: 5.41 s, peak
//!   resident 573 MB;
//! - the same with the default `decompose` (4 sampled cells): 8.82 s, 590 MB — so 0.85 s per decomposed cell
//!   per million grid cells.
//!
//! The straight line through the origin plus a fixed start-up cost over-forecasts tiny grids that fit in the
//! caches: the 48×24×16 sweep case (4 decomposed cells) takes about 0.09 s, forecast 0.19 s. Calibrated on
//! Darcy cases; Brinkman/Stokes flow solves cost more. A forecast, not a bound.

use crate::case::Case;

/// Resident memory that does not scale with the grid (program, HDF5 library, small buffers), bytes.
const BASE_BYTES: f64 = 14.0e6;
/// Resident memory per grid cell, bytes (geometry, flow, transport, multigrid hierarchy, Krylov vectors).
const BYTES_PER_GRID_CELL: f64 = 560.0;
/// Extra resident memory per grid cell for each thread beyond the first (per-thread work buffers), bytes:
/// the demo case peaked at 590 MB on one thread and 677 MB on two (one pair of runs, so a rough slope).
const BYTES_PER_GRID_CELL_PER_EXTRA_THREAD: f64 = 87.0;
/// Fixed cost of a run (start-up, file writes), seconds.
const BASE_SECONDS: f64 = 0.03;
/// Time per grid cell on one thread of the run without the self/neighbour split, seconds.
const SECONDS_PER_GRID_CELL: f64 = 5.4e-6;
/// Time per grid cell of the self/neighbour split of one cell (one more transport solve, warm-started
/// multigrid hierarchy), on one thread, seconds.
const DECOMPOSE_SECONDS_PER_GRID_CELL: f64 = 0.85e-6;
/// Parallel efficiency assumed for the threads of one case (common practice for memory-bound stencils).
const THREAD_EFFICIENCY: f64 = 0.7;

/// What one case is expected to need.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Forecast {
    /// Grid cells of the case.
    pub grid_cells: usize,
    /// Cells that get the self/neighbour split.
    pub decomposed_cells: usize,
    /// Peak resident memory on one thread, bytes.
    pub memory_bytes: f64,
    /// Wall time on one thread, seconds, the split included.
    pub seconds_one_thread: f64,
    /// The part of `seconds_one_thread` spent on the self/neighbour split.
    pub decompose_seconds_one_thread: f64,
}

impl Forecast {
    /// Forecast for a validated case.
    pub fn of(case: &Case) -> Forecast {
        let decomposed = case.sensing.decompose.choose(case.layout.cells.len()).len();
        Forecast::for_grid(case.grid.len(), decomposed)
    }

    /// Forecast for a grid of `grid_cells` with `decomposed_cells` self/neighbour splits.
    pub fn for_grid(grid_cells: usize, decomposed_cells: usize) -> Forecast {
        let n = grid_cells as f64;
        let decompose = DECOMPOSE_SECONDS_PER_GRID_CELL * n * decomposed_cells as f64;
        Forecast {
            grid_cells,
            decomposed_cells,
            memory_bytes: BASE_BYTES + BYTES_PER_GRID_CELL * n,
            seconds_one_thread: BASE_SECONDS + SECONDS_PER_GRID_CELL * n + decompose,
            decompose_seconds_one_thread: decompose,
        }
    }

    /// Peak resident memory on `threads` threads, bytes.
    pub fn memory_bytes_on(&self, threads: usize) -> f64 {
        self.memory_bytes
            + BYTES_PER_GRID_CELL_PER_EXTRA_THREAD * (threads.max(1) - 1) as f64 * self.grid_cells as f64
    }

    /// Wall time on `threads` threads, seconds, the split included.
    pub fn seconds(&self, threads: usize) -> f64 {
        self.seconds_one_thread / speedup(threads)
    }

    /// The split's part of the wall time on `threads` threads, seconds.
    pub fn decompose_seconds(&self, threads: usize) -> f64 {
        self.decompose_seconds_one_thread / speedup(threads)
    }
}

/// Speed-up of one case on `threads` threads: each thread beyond the first adds `THREAD_EFFICIENCY`.
fn speedup(threads: usize) -> f64 {
    1.0 + (threads.max(1) as f64 - 1.0) * THREAD_EFFICIENCY
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
        // The runs named in the module doc, within 5%.
        let demo = Forecast::for_grid(200 * 100 * 50, 0);
        assert!((demo.memory_bytes / 573e6 - 1.0).abs() < 0.05, "{}", demo.memory_bytes);
        assert!((demo.seconds_one_thread / 5.41 - 1.0).abs() < 0.05, "{}", demo.seconds_one_thread);
        let split = Forecast::for_grid(200 * 100 * 50, 4);
        assert!((split.seconds_one_thread / 8.82 - 1.0).abs() < 0.05, "{}", split.seconds_one_thread);
        assert!((split.memory_bytes / 590e6 - 1.0).abs() < 0.05, "{}", split.memory_bytes);
        assert!((demo.memory_bytes_on(2) / 677e6 - 1.0).abs() < 0.05, "{}", demo.memory_bytes_on(2));
        // Threads divide the time, the split included; the tiny sweep case is over-forecast (module doc).
        assert!(
            split.seconds(2) < split.seconds(1) && split.decompose_seconds(2) < split.decompose_seconds(1)
        );
        let tiny = Forecast::for_grid(48 * 24 * 16, 4);
        assert!(
            tiny.seconds_one_thread > 0.09 && tiny.seconds_one_thread < 0.25,
            "{}",
            tiny.seconds_one_thread
        );
    }

    #[test]
    fn formats() {
        assert_eq!(format_bytes(573e6), "573 MB");
        assert_eq!(format_bytes(2.5e9), "2.5 GB");
        assert_eq!(format_seconds(0.43), "0.4 s");
        assert_eq!(format_seconds(600.0), "10.0 min");
    }
}
