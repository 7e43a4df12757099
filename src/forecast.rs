//! The one memory and run-time model of a case: `plumefield estimate` prints it, `sweep --plan` lists
//! it per case, and the Slurm scripts size `--mem` and `--time` from it (with headroom, see `slurm.rs`).
//!
//! Memory and time grow linearly with the number of grid cells (multigrid-preconditioned solves, DESIGN.md
//! §3) and with the cells' surface in grid units, `Σ (r/h)²` (their facets, each with its extrapolation stencil
//! and exchange forms: the term that dominates dense layouts); the self/neighbour split adds one transport solve
//! per decomposed cell (`[sensing] decompose`; in a transient run one more time integration per cell, counted as
//! the run's steps). The peak is the flow stage's or the transport stage's, whichever is larger (the split is
//! held under the transport stage's peak, the later stages are smaller).
//! The constants are calibrated on cases/demo.toml, cases/bench128.toml and the half demo (200 × 200 × 100 µm) in
//! Darcy and Brinkman flow, and on the 256³ and dense 160³ blocks of `scripts/bench_scale`, with the default
//! split, CPU time and the largest stage peak of `summary.json` (bench/RECORDS.md, "Stage memory after the
//! lean-stages changes, and the forecast refit").
//! The straight line plus a fixed start-up cost over-forecasts tiny grids that fit in the caches. The
//! Brinkman/Stokes flow solve (whose cost per grid cell grows slowly with the grid) and the time steps of
//! transient runs are added from their benchmarks (constants below; an adaptive run is assumed to take a fixed
//! number of steps), and so is the far-field condition of many cells (direct sum or patch sums, from
//! `bench --bin far-field-pair-cost`). A forecast, not a bound.

use crate::case::Case;
use solver::problem::{ChamberFace, FarFieldSources, MediumModel};
use solver::transport::far_field_sources::FarFieldSumParams;

/// Resident memory that does not scale with the case (program, HDF5 library, small buffers), bytes.
const BASE_BYTES: f64 = 23.0e6;
/// Resident memory per grid cell at the transport stage's peak (geometry, flow field, assembled operator, its
/// packed form and multigrid hierarchy, Krylov vectors), bytes.
const BYTES_PER_GRID_CELL: f64 = 205.0;
/// The same at the peak of a Darcy flow stage and of a Brinkman/Stokes flow stage, bytes.
const DARCY_FLOW_BYTES_PER_GRID_CELL: f64 = 200.0;
const VISCOUS_FLOW_BYTES_PER_GRID_CELL: f64 = 294.0;
/// Resident memory per unit of cell surface in grid units (`(r/h)²`, about 19 facets) at the transport stage's
/// peak (facets, extrapolation stencils, exchange forms) and at the flow stage's (facets and stencils; the
/// Brinkman/Stokes stage also its cut links), bytes.
const BYTES_PER_SURFACE: f64 = 48.5e3;
const DARCY_FLOW_BYTES_PER_SURFACE: f64 = 28.8e3;
const VISCOUS_FLOW_BYTES_PER_SURFACE: f64 = 24.7e3;
/// Extra resident memory per grid cell for each thread beyond the first (per-thread work buffers; the split's
/// parallel solves are held under the transport stage's peak), bytes.
const BYTES_PER_GRID_CELL_PER_EXTRA_THREAD: f64 = 8.0;
/// Fixed cost of a run (start-up, file writes), seconds.
const BASE_SECONDS: f64 = 0.05;
/// Time per grid cell on one thread of the Darcy run without the self/neighbour split, seconds.
const SECONDS_PER_GRID_CELL: f64 = 0.96e-6;
/// Time per unit of cell surface in grid units on one thread (facets, stencils, exchange forms, sensing),
/// seconds.
const SECONDS_PER_SURFACE: f64 = 0.30e-3;
/// Time per grid cell of the self/neighbour split of one cell (one more transport solve on the kept operator
/// and hierarchy), on one thread, seconds.
const DECOMPOSE_SECONDS_PER_GRID_CELL: f64 = 0.36e-6;
/// Brinkman/Stokes flow solve per grid cell on one thread beyond the Darcy solve, seconds, at
/// `VISCOUS_FLOW_REFERENCE_GRID_CELLS`; it grows as the grid's size to the power `VISCOUS_FLOW_GROWTH` (a fit
/// to the half demo and the 256³ block).
const VISCOUS_FLOW_SECONDS_PER_GRID_CELL: f64 = 6.7e-6;
const VISCOUS_FLOW_REFERENCE_GRID_CELLS: f64 = 0.5e6;
const VISCOUS_FLOW_GROWTH: f64 = 0.11;
/// The Brinkman/Stokes solve's cost per unit of cell surface in grid units, one thread, seconds: cut links and
/// the outer iterations that dense layouts add (36 against 26 on the dense 160³ and sparse 256³ blocks).
const VISCOUS_FLOW_SECONDS_PER_SURFACE: f64 = 0.77e-3;
/// One BDF2 time step per grid cell on one thread, seconds, with the history-projection guess (from
/// `scripts/bench_transient`).
const STEP_SECONDS_PER_GRID_CELL: f64 = 0.12e-6;
/// Steps assumed for an adaptive run: the demo chamber reaches steady state in a few dozen; a run without
/// `stop_at_steady` or with events takes more, hence the headroom.
const ADAPTIVE_STEPS: f64 = 100.0;
/// History fields (four solutions and their operator products for the guess), step vectors, a second multigrid
/// hierarchy and the sensing window of a transient run, bytes per grid cell (transient minus steady peak of
/// cases/bench128.toml).
const TRANSIENT_BYTES_PER_GRID_CELL: f64 = 120.0;
/// The own field of one split cell in a transient run: the field and its history, bytes per grid cell (their
/// copies in a checkpoint are transient).
const OWN_FIELD_BYTES_PER_GRID_CELL: f64 = 16.0;
/// The direct far-field sum per (far-field face, secreting cell) pair on one thread, seconds (bench/RECORDS.md,
/// "Far-field superposition cost").
const FAR_FIELD_SECONDS_PER_PAIR: f64 = 11e-9;
/// The far-field patch sums (above `FarFieldSumParams::direct_below_pairs`) on one thread: per far-field face and
/// per (secreting cell, far-field chamber side), seconds (the 2026-12-05 degree-16 rows of the same record:
/// 192³–384³, 1000–40,000 cells, within −7 … +18 %).
const FAR_FIELD_PATCH_SECONDS_PER_FACE: f64 = 1.1e-6;
const FAR_FIELD_PATCH_SECONDS_PER_CELL_SIDE: f64 = 45e-6;
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
    /// Forecast for a validated case: the steady Darcy model of [`Forecast::for_grid`], plus the Brinkman/Stokes
    /// flow solve (once per flow phase) and the time steps of a transient run.
    pub fn of(case: &Case) -> Forecast {
        let decomposed = case.sensing.decompose.choose(case.layout.cells.len()).len();
        let mut forecast = Forecast::for_grid(case.grid.len(), decomposed);
        let n = case.grid.len() as f64;
        let h = case.grid.spacing;
        let surface: f64 = case.layout.cells.iter().map(|c| (c.radius / h).powi(2)).sum();
        let viscous = !matches!(case.flow.medium, MediumModel::Darcy { .. });
        let (flow_bytes, flow_surface_bytes) = if viscous {
            (VISCOUS_FLOW_BYTES_PER_GRID_CELL, VISCOUS_FLOW_BYTES_PER_SURFACE)
        } else {
            (DARCY_FLOW_BYTES_PER_GRID_CELL, DARCY_FLOW_BYTES_PER_SURFACE)
        };
        forecast.memory_bytes = BASE_BYTES
            + (flow_bytes * n + flow_surface_bytes * surface)
                .max(BYTES_PER_GRID_CELL * n + BYTES_PER_SURFACE * surface);
        forecast.seconds_one_thread += SECONDS_PER_SURFACE * surface;
        let transient = case.solve.transient.as_ref();
        let phases = 1 + transient.map_or(0, |t| usize::from(t.flow_change.is_some()));
        if viscous {
            forecast.seconds_one_thread +=
                (viscous_flow_seconds(n) + VISCOUS_FLOW_SECONDS_PER_SURFACE * surface) * phases as f64;
        }
        forecast.seconds_one_thread += far_field_seconds(case);
        if let Some(t) = transient {
            // A transient run keeps a few history fields; its split (only when asked) integrates each chosen
            // cell's own field with the same steps, one more solve per step, two more fields per cell.
            forecast.seconds_one_thread -= forecast.decompose_seconds_one_thread;
            let steps = if t.adaptive.is_some() {
                ADAPTIVE_STEPS
            } else {
                (t.end_time / t.time_step).ceil().max(1.0)
            };
            let split = (STEP_SECONDS_PER_GRID_CELL * n * steps) * decomposed as f64;
            forecast.decompose_seconds_one_thread = split;
            forecast.seconds_one_thread += STEP_SECONDS_PER_GRID_CELL * n * steps + split;
            forecast.memory_bytes +=
                (TRANSIENT_BYTES_PER_GRID_CELL + OWN_FIELD_BYTES_PER_GRID_CELL * decomposed as f64) * n;
        }
        forecast
    }

    /// Forecast for a grid of `grid_cells` with `decomposed_cells` self/neighbour splits, in Darcy flow, without
    /// the cells' surface terms (which [`Forecast::of`] adds).
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

/// The Brinkman/Stokes flow solve of `grid_cells` beyond the Darcy solve, one thread, seconds.
fn viscous_flow_seconds(grid_cells: f64) -> f64 {
    let growth = (grid_cells / VISCOUS_FLOW_REFERENCE_GRID_CELLS).max(1e-6).powf(VISCOUS_FLOW_GROWTH);
    VISCOUS_FLOW_SECONDS_PER_GRID_CELL * grid_cells * growth
}

/// The steady far-field coefficients of one assembly on one thread, seconds: the direct sum over (face, cell)
/// pairs, or the patch sums above the solver's pair threshold.
fn far_field_seconds(case: &Case) -> f64 {
    let shape = case.grid.shape;
    let mut faces = 0.0;
    let mut sides = 0.0;
    for axis in 0..3 {
        for side in 0..2 {
            if case.boundaries.faces[axis][side] == ChamberFace::FarField {
                faces += (shape[(axis + 1) % 3] * shape[(axis + 2) % 3]) as f64;
                sides += 1.0;
            }
        }
    }
    let secreting = case.layout.cells.iter().filter(|c| c.secretion_rate > 0.0).count().max(1) as f64;
    let sources = if case.boundaries.far_field_sources == FarFieldSources::Cells { secreting } else { 1.0 };
    let pairs = faces * sources;
    if sources < 2.0 || pairs < FarFieldSumParams::default().direct_below_pairs {
        FAR_FIELD_SECONDS_PER_PAIR * pairs
    } else {
        FAR_FIELD_PATCH_SECONDS_PER_FACE * faces + FAR_FIELD_PATCH_SECONDS_PER_CELL_SIDE * sources * sides
    }
}

/// Speed-up of one case on `threads` threads: each thread beyond the first adds `THREAD_EFFICIENCY`.
fn speedup(threads: usize) -> f64 {
    1.0 + (threads.max(1) as f64 - 1.0) * THREAD_EFFICIENCY
}

/// `5.1 TB`, `1.2 GB`, `350 MB`, `24 MB`.
pub fn format_bytes(bytes: f64) -> String {
    if bytes >= 1e12 {
        format!("{:.1} TB", bytes / 1e12)
    } else if bytes >= 1e9 {
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
    fn viscous_flow_and_time_steps_add_to_the_forecast() {
        let base = include_str!("../cases/demo.toml");
        let parse =
            |text: &str| Case::parse(text, std::path::Path::new("cases/demo.toml")).expect("case parses");
        let steady = Forecast::of(&parse(base));
        let brinkman = Forecast::of(&parse(&base.replace("model = \"darcy\"", "model = \"brinkman\"")));
        let added = brinkman.seconds_one_thread - steady.seconds_one_thread;
        let case = parse(base);
        let surface: f64 = case.layout.cells.iter().map(|c| (c.radius / case.grid.spacing).powi(2)).sum();
        let expected = viscous_flow_seconds(1e6) + VISCOUS_FLOW_SECONDS_PER_SURFACE * surface;
        assert!((added - expected).abs() < 1e-9, "{added} vs {expected}");
        // The demo's 300 cells make the transport stage the peak in both models; with few cells the
        // Brinkman/Stokes flow stage is the larger.
        assert!(brinkman.memory_bytes >= steady.memory_bytes);
        let sparse = base.replace("count = 300", "count = 30");
        let sparse_brinkman =
            Forecast::of(&parse(&sparse.replace("model = \"darcy\"", "model = \"brinkman\"")));
        assert!(sparse_brinkman.memory_bytes > Forecast::of(&parse(&sparse)).memory_bytes);
        let transient = base.replace(
            "mode = \"steady\"",
            "mode = \"transient\"\nend_time = \"10 min\"\ntime_step = \"5 s\"\noutput_every = \"5 min\"",
        );
        let stepped = Forecast::of(&parse(&transient));
        // 120 steps of the demo's 1e6 grid cells, without the split of the steady run.
        let expected = steady.seconds_one_thread - steady.decompose_seconds_one_thread
            + 120.0 * STEP_SECONDS_PER_GRID_CELL * 1e6;
        assert!(
            (stepped.seconds_one_thread - expected).abs() < 1e-9,
            "{} vs {expected}",
            stepped.seconds_one_thread
        );
        assert!(stepped.memory_bytes > steady.memory_bytes);
        // Asked for explicitly, the split of two cells costs two more integrations.
        let split = Forecast::of(&parse(&transient.replace("[sensing]", "[sensing]\ndecompose = [0, 1]")));
        let more = split.seconds_one_thread - stepped.seconds_one_thread;
        assert!((more - 2.0 * 120.0 * STEP_SECONDS_PER_GRID_CELL * 1e6).abs() < 1e-9, "{more}");
        assert_eq!((split.decomposed_cells, stepped.decomposed_cells), (2, 0));
        assert!(split.memory_bytes > stepped.memory_bytes);
    }

    #[test]
    fn forecast_reproduces_the_calibration_runs() {
        // The one-thread runs of bench/RECORDS.md ("... the forecast refit"), 4 split cells: CPU seconds and
        // the largest stage peak, within 10 %.
        let parse = |text: &str| Case::parse(text, std::path::Path::new("case.toml")).expect("case parses");
        let demo = include_str!("../cases/demo.toml");
        let half = demo
            .replace("\"400 um\", \"200 um\", \"100 um\"", "\"200 um\", \"200 um\", \"100 um\"")
            .replace("count = 300", "count = 150");
        for (text, seconds, bytes) in [
            (demo.to_string(), 3.82, 439e6),
            (include_str!("../cases/bench128.toml").to_string(), 6.04, 594e6),
            (half, 2.0, 231e6),
        ] {
            let f = Forecast::of(&parse(&text));
            assert!(
                (f.seconds_one_thread / seconds - 1.0).abs() < 0.1,
                "{} vs {seconds}",
                f.seconds_one_thread
            );
            assert!((f.memory_bytes / bytes - 1.0).abs() < 0.1, "{} vs {bytes}", f.memory_bytes);
        }
        // Threads divide the time, the split included; the tiny sweep case is over-forecast (module doc).
        let split = Forecast::for_grid(200 * 100 * 50, 4);
        assert!(
            split.seconds(2) < split.seconds(1) && split.decompose_seconds(2) < split.decompose_seconds(1)
        );
        assert!(split.memory_bytes_on(2) > split.memory_bytes_on(1));
        let tiny = Forecast::for_grid(48 * 24 * 16, 4);
        assert!(
            tiny.seconds_one_thread > 0.05 && tiny.seconds_one_thread < 0.25,
            "{}",
            tiny.seconds_one_thread
        );
    }

    #[test]
    fn far_field_of_many_cells_adds_the_patch_sums() {
        let base = include_str!("../cases/stream_cell.toml")
            .replace("cells_per_radius = 4", "spacing = \"0.5 um\"")
            .replace("list = [{ x = \"80 um\", y = \"80 um\", z = \"80 um\" }]", "")
            .replace(
                "radius = \"8 um\"",
                "radius = \"2 um\"\nlayout = { kind = \"random\", count = 2000, seed = 1 }",
            );
        let parse = |text: &str| Case::parse(text, std::path::Path::new("case.toml")).expect("case parses");
        let cells = Forecast::of(&parse(&base));
        let centroid = Forecast::of(&parse(
            &base.replace("z_max = \"far_field\"", "z_max = \"far_field\"\nfar_field_sources = \"centroid\""),
        ));
        // Four far-field sides of 320² faces: 2000 cells × 409,600 faces is above the direct sum's pair count.
        let faces = 4.0 * 320.0 * 320.0;
        let patch =
            FAR_FIELD_PATCH_SECONDS_PER_FACE * faces + FAR_FIELD_PATCH_SECONDS_PER_CELL_SIDE * 2000.0 * 4.0;
        let added = cells.seconds_one_thread - centroid.seconds_one_thread;
        assert!((added - (patch - FAR_FIELD_SECONDS_PER_PAIR * faces)).abs() < 1e-9, "{added} vs {patch}");
    }

    #[test]
    fn formats() {
        assert_eq!(format_bytes(573e6), "573 MB");
        assert_eq!(format_bytes(2.5e9), "2.5 GB");
        assert_eq!(format_seconds(0.43), "0.4 s");
        assert_eq!(format_seconds(600.0), "10.0 min");
    }
}
