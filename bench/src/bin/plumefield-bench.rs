//! Performance figures of the steady transport solve (the `scripts/bench` driver).
//!
//! `plumefield-bench solve [CASE] [--threads 1,2] [--reps 3] [--export DIR] [--json FILE] [--coarsest N]` builds the geometry
//! and Darcy flow of CASE (default `cases/bench128.toml`), assembles the transport system once, then times
//! `SteadySolver::new` + `solve` in rayon pools of each thread count (best of `--reps`), one operator
//! application beside one application of a plain 7-point constant-coefficient f64 stencil on the same grid (the
//! stencil-equivalent, measured in the same pool), and the peak memory of the transport stage. `--export DIR` writes the system as Matrix Market
//! (`matrix.mtx`, `rhs.mtx`) for the peer solvers; `--json` writes the figures for `compare`.
//!
//! `plumefield-bench compare OURS.json PEERS.jsonl` prints our figures beside the peer solvers' (one JSON object
//! per line, as `peer_solve.py` prints them) with the time ratios.

use anyhow::{bail, Context, Result};
use clap::{Parser, Subcommand};
use mesh::EmbeddedGeometry;
use numkit::meter;
use plumefield::case::Case;
use plumefield::engine::steady_case;
use plumefield_bench::{load_average, process_cpu_seconds as cpu_seconds};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use solver::embedded::FacetStencils;
use solver::linalg::{
    system_memory_bytes, KrylovParams, LinearSystem, MultigridParams, PackedOperator, SparseCorrection,
    SteadySolver,
};
use solver::solve_case::solve_flow;
use solver::transport::{assemble_transport, TransportAssembly, TransportProblem};
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};
use std::time::Instant;

#[derive(Parser)]
#[command(name = "plumefield-bench", about = "Timing and memory of the steady transport solve")]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Time our solve of CASE's transport system and optionally export it.
    Solve {
        #[arg(default_value = "cases/bench128.toml")]
        case: PathBuf,
        /// Rayon pool sizes to time, comma separated.
        #[arg(long, value_delimiter = ',', default_value = "1,2")]
        threads: Vec<usize>,
        /// Timed repetitions per pool size (the best is reported).
        #[arg(long, default_value_t = 3)]
        reps: usize,
        /// Folder to write matrix.mtx and rhs.mtx into (Matrix Market).
        #[arg(long)]
        export: Option<PathBuf>,
        /// File to write the figures into (JSON), for `compare`.
        #[arg(long)]
        json: Option<PathBuf>,
        /// Multigrid levels of at most this many grid cells are solved directly (default: the solver's).
        #[arg(long)]
        coarsest: Option<usize>,
    },
    /// Print our figures beside the peer solvers' with time ratios.
    Compare { ours: PathBuf, peers: PathBuf },
}

/// One pool size: best of the repetitions.
#[derive(Serialize, Deserialize, Clone, Debug)]
struct Run {
    threads: usize,
    setup_s: f64,
    solve_s: f64,
    total_s: f64,
    iters: usize,
    relres: f64,
    /// One application of the full operator (f64, with the sparse correction).
    apply_s: f64,
    /// solve_s / apply_s.
    work_units: f64,
    /// User + system CPU seconds of the best repetition's solve.
    solve_cpu_s: f64,
    /// User + system CPU seconds of the best repetition's setup.
    #[serde(default)]
    setup_cpu_s: f64,
    /// One application of a plain 7-point constant-coefficient f64 stencil on the same grid.
    #[serde(default)]
    stencil_s: f64,
    /// CPU seconds of one operator application and of one stencil application (one-thread pool: the meaningful
    /// figures on a loaded machine; none for pools of more threads, whose work runs on other threads).
    #[serde(default)]
    apply_cpu_s: Option<f64>,
    #[serde(default)]
    stencil_cpu_s: Option<f64>,
}

#[derive(Serialize, Deserialize, Debug)]
struct Figures {
    case: String,
    shape: [usize; 3],
    cells: usize,
    active_cells: usize,
    nnz: Option<usize>,
    levels: usize,
    runs: Vec<Run>,
    /// Peak resident memory of the transport stage (assembly, setup, solve) above the resident memory before it.
    peak_transport_bytes: Option<u64>,
    bytes_per_cell: Option<f64>,
    system_bytes: usize,
    solver_bytes: usize,
    load_average: String,
}

fn main() {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Solve { case, threads, reps, export, json, coarsest } => {
            let mut params = MultigridParams::default();
            if let Some(size) = coarsest {
                params.coarsest_size = size;
            }
            solve(&case, &threads, reps.max(1), export.as_deref(), json.as_deref(), params)
        }
        Command::Compare { ours, peers } => compare(&ours, &peers),
    };
    if let Err(e) = result {
        eprintln!("error: {e:#}");
        std::process::exit(1);
    }
}

fn pool(threads: usize) -> Result<rayon::ThreadPool> {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .with_context(|| format!("cannot build a pool of {threads} threads"))
}

/// Timed repetitions of one product; the fastest counts (on a loaded machine most are slowed by others).
const APPLY_REPS: usize = 20;

/// CPU seconds of the calling thread (`clock_gettime(CLOCK_THREAD_CPUTIME_ID)`, nanosecond resolution; NaN
/// off Linux). On a loaded machine the wall time of anything longer than a scheduler slice is inflated by the
/// other processes; the thread's CPU time is not.
fn thread_cpu_now() -> f64 {
    #[cfg(target_os = "linux")]
    {
        #[repr(C)]
        struct Timespec {
            sec: i64,
            nsec: i64,
        }
        extern "C" {
            fn clock_gettime(clock: i32, ts: *mut Timespec) -> i32;
        }
        const CLOCK_THREAD_CPUTIME_ID: i32 = 3;
        let mut ts = Timespec { sec: 0, nsec: 0 };
        // SAFETY: `ts` is a valid, writable timespec for the C library to fill.
        if unsafe { clock_gettime(CLOCK_THREAD_CPUTIME_ID, &mut ts) } == 0 {
            return ts.sec as f64 + 1e-9 * ts.nsec as f64;
        }
    }
    f64::NAN
}

/// Wall and CPU seconds of `product` on the calling thread (run it in a one-thread pool for CPU time to mean
/// the product's), each the fastest of [`APPLY_REPS`].
fn fastest(mut product: impl FnMut()) -> (f64, f64) {
    (0..APPLY_REPS)
        .map(|_| {
            let (t, c) = (Instant::now(), thread_cpu_now());
            product();
            (t.elapsed().as_secs_f64(), thread_cpu_now() - c)
        })
        .fold((f64::INFINITY, f64::INFINITY), |(w, c), (a, b)| (w.min(a), c.min(b)))
}

/// `y = 6 x_P − Σ_6 x_N` on a grid of `shape` (zero outside): the plain constant-coefficient 7-point stencil
/// in f64, line by line in parallel like the operator, the yardstick of one "stencil-equivalent".
fn plain_stencil(shape: [usize; 3], x: &[f64], y: &mut [f64]) {
    let [nx, ny, nz] = shape;
    let plane = nx * ny;
    let zero = vec![0.0; nx];
    y.par_chunks_mut(nx).with_min_len((4096 / nx).max(1)).enumerate().for_each(|(line, yl)| {
        let (j, k) = (line % ny, line / ny);
        let base = line * nx;
        let xl = &x[base..base + nx];
        let at = |exists: bool, start: usize| if exists { &x[start..start + nx] } else { &zero[..] };
        let ym = at(j > 0, base.wrapping_sub(nx));
        let yp = at(j + 1 < ny, base + nx);
        let zm = at(k > 0, base.wrapping_sub(plane));
        let zp = at(k + 1 < nz, base + plane);
        for i in 0..nx {
            yl[i] = 6.0 * xl[i] - (ym[i] + yp[i] + zm[i] + zp[i]);
        }
        for i in 1..nx {
            yl[i] -= xl[i - 1];
        }
        for i in 0..nx - 1 {
            yl[i] -= xl[i + 1];
        }
    });
}

fn solve(
    case_path: &Path,
    threads: &[usize],
    reps: usize,
    export: Option<&Path>,
    json: Option<&Path>,
    params: MultigridParams,
) -> Result<()> {
    if threads.is_empty() || threads.contains(&0) {
        bail!("--threads needs positive pool sizes");
    }
    let case = Case::load(case_path)?;
    let grid = &case.grid;
    let n = grid.len();
    println!(
        "case {} ({}): grid {:?} = {n} grid cells, {} cells",
        case_path.display(),
        case.title,
        grid.shape,
        case.layout.cells.len()
    );
    println!("load average {}", load_average());

    let t = Instant::now();
    let geometry = EmbeddedGeometry::build(grid, &case.layout, case.boundaries.periodic_axes());
    let stencils = FacetStencils::build(&geometry);
    let krylov =
        KrylovParams { relative_tolerance: case.solve.tolerance, max_iterations: case.solve.max_iterations };
    let (flow, _) = solve_flow(&geometry, &stencils, &steady_case(&case), case.flow.mean_velocity)?;
    println!("geometry and flow built in {:.2} s", t.elapsed().as_secs_f64());

    // The transport stage, measured for memory: assembly, multigrid setup and one solve.
    let baseline = meter::resident_bytes();
    let peak_reset = meter::reset_peak_resident();
    let problem = TransportProblem {
        geometry: &geometry,
        stencils: &stencils,
        layout: &case.layout,
        boundaries: case.boundaries,
        ligand: case.ligand,
        face_flux: &flow.face_flux,
        far_field_speed: case.flow.mean_velocity,
    };
    let TransportAssembly { system, rhs, peclet, .. } = assemble_transport(&problem);
    if peclet.upwinded_faces > 0 {
        println!(
            "note: {} faces above cell Péclet 2 (the run command would add deferred-correction solves)",
            peclet.upwinded_faces
        );
    }
    let system_bytes = system_memory_bytes(&system);
    let active_cells = system.operator.active.iter().filter(|&&a| a).count();
    let first_pool = pool(threads[0])?;
    // Resident and peak bytes above the stage's start per grid cell, at the steps of the stage.
    let mut steps = Vec::new();
    let mut mark = |step: &str| {
        if let (Some(base), Some(now), Some(hwm)) =
            (baseline, meter::resident_bytes(), meter::peak_resident_bytes())
        {
            let per_cell = |b: u64| b.saturating_sub(base) as f64 / n as f64;
            steps.push(format!("{step} {:.0}/{:.0}", per_cell(now), per_cell(hwm)));
        }
    };
    mark("assembled");
    let (solver, first_info) = first_pool.install(|| {
        let solver = SteadySolver::new(system, params.clone());
        mark("set up");
        let mut x = vec![0.0; n];
        let info = solver.solve(&rhs, &mut x, &krylov);
        mark("solved");
        (solver, info)
    });
    println!("memory by step (resident/peak B per grid cell above the stage's start): {}", steps.join(", "));
    let first_info = first_info.context("the benchmark solve failed")?;
    let peak = match (baseline, meter::peak_resident_bytes(), peak_reset) {
        (Some(base), Some(hwm), true) => Some(hwm.saturating_sub(base)),
        _ => None,
    };
    let solver_bytes = solver.memory_bytes();
    let levels = solver.levels();
    println!(
        "system assembled; {levels} multigrid levels; first solve {} iterations, relative residual {:.2e}",
        first_info.iterations, first_info.relative_residual
    );

    let mut nnz = None;
    if let Some(dir) = export {
        let t = Instant::now();
        std::fs::create_dir_all(dir).with_context(|| format!("cannot create {}", dir.display()))?;
        let matrix = solver.assembled_matrix();
        nnz = Some(matrix.nnz());
        // A and b in SI units hold entries near 1e-16 m^3/s, below the absolute zero-pivot threshold of some
        // factorisations (PETSc's is 2.2e-14): export s·A and s·b with s = 1/max|a_PP| over the fluid rows, the
        // same solution. Rows of grid cells without fluid stay the identity (their right-hand side is zero).
        let active = solver.active();
        let max_diag =
            matrix.diag().iter().filter(|&(p, _)| active[p]).fold(0.0f64, |m, (_, &v)| m.max(v.abs()));
        let scale = if max_diag > 0.0 && max_diag.is_finite() { 1.0 / max_diag } else { 1.0 };
        write_matrix_market(&matrix, scale, active, &dir.join("matrix.mtx"))?;
        let scaled_rhs: Vec<f64> =
            rhs.iter().zip(active).map(|(b, &a)| if a { scale * b } else { *b }).collect();
        write_vector_market(&scaled_rhs, &dir.join("rhs.mtx"))?;
        println!(
            "exported matrix.mtx ({} nonzeros) and rhs.mtx to {} in {:.1} s",
            matrix.nnz(),
            dir.display(),
            t.elapsed().as_secs_f64()
        );
    }
    let system: LinearSystem = solver.into_system();
    product_parts(&system, threads[0])?;

    let mut runs = Vec::new();
    for &threads in threads {
        let pool = pool(threads)?;
        let mut best: Option<Run> = None;
        for _ in 0..reps {
            let run = pool.install(|| -> Result<Run> {
                let copy = system.clone();
                let cpu = cpu_seconds();
                let t = Instant::now();
                let solver = SteadySolver::new(copy, params.clone());
                let setup = t.elapsed().as_secs_f64();
                let setup_cpu = cpu_seconds() - cpu;
                let mut x = vec![0.0; n];
                let cpu = cpu_seconds();
                let t = Instant::now();
                let info = solver.solve(&rhs, &mut x, &krylov)?;
                let solve = t.elapsed().as_secs_f64();
                let solve_cpu = cpu_seconds() - cpu;
                let mut y = vec![0.0; n];
                let (apply, apply_cpu) = fastest(|| solver.apply(&x, &mut y));
                let (stencil, stencil_cpu) = fastest(|| plain_stencil(grid.shape, &x, &mut y));
                let one = |cpu: f64| (threads == 1 && cpu.is_finite()).then_some(cpu);
                Ok(Run {
                    threads,
                    setup_s: setup,
                    solve_s: solve,
                    total_s: setup + solve,
                    iters: info.iterations,
                    relres: info.relative_residual,
                    apply_s: apply,
                    work_units: solve / apply,
                    solve_cpu_s: solve_cpu,
                    setup_cpu_s: setup_cpu,
                    stencil_s: stencil,
                    apply_cpu_s: one(apply_cpu),
                    stencil_cpu_s: one(stencil_cpu),
                })
            })?;
            if best.as_ref().map_or(true, |b| run.total_s < b.total_s) {
                best = Some(run);
            }
        }
        if let Some(run) = best {
            runs.push(run);
        }
    }

    let figures = Figures {
        case: case_path.display().to_string(),
        shape: grid.shape,
        cells: n,
        active_cells,
        nnz,
        levels,
        runs,
        peak_transport_bytes: peak,
        bytes_per_cell: peak.map(|p| p as f64 / n as f64),
        system_bytes,
        solver_bytes,
        load_average: load_average(),
    };
    print_ours(&figures);
    if let Some(path) = json {
        let text = serde_json::to_string_pretty(&figures)?;
        std::fs::write(path, text).with_context(|| format!("cannot write {}", path.display()))?;
    }
    Ok(())
}

/// The two parts of one operator application timed apart (CPU time in a pool of `threads`): the packed
/// face-coupled product and the cut-cell correction, with the sizes that drive them.
fn product_parts(system: &LinearSystem, threads: usize) -> Result<()> {
    let op = &system.operator;
    let n = op.sink.len();
    let packed = PackedOperator::pack(op);
    let correction = system.correction.as_ref().map(SparseCorrection::pack).unwrap_or_default();
    let x: Vec<f64> = (0..n).map(|p| 1.0 + (p as f64 * 0.37).sin()).collect();
    let mut y = vec![0.0; n];
    let ((_, face_cpu), (_, correction_cpu)) = pool(threads)?.install(|| {
        let face = fastest(|| packed.apply(op, system.scheme, &x, &mut y));
        let corr = fastest(|| correction.add_product(&x, &mut y));
        (face, corr)
    });
    let lines = op.shape[1] * op.shape[2];
    println!(
        "product parts ({threads} thread pool, CPU): face-coupled {:.2} ms ({} irregular grid cells on {} of {lines} \
         x-lines), cut-cell correction {:.2} ms ({} rows)",
        1e3 * face_cpu,
        packed.irregular_cells(),
        packed.irregular_lines(),
        1e3 * correction_cpu,
        correction.row_count()
    );
    Ok(())
}

fn print_ours(f: &Figures) {
    println!();
    println!(
        "{:>8} {:>9} {:>9} {:>9} {:>6} {:>9} {:>9} {:>10} {:>9} {:>9} {:>9}",
        "threads",
        "setup s",
        "solve s",
        "total s",
        "iters",
        "relres",
        "apply ms",
        "stencil ms",
        "apply/st.",
        "setup cpu",
        "solve cpu"
    );
    for r in &f.runs {
        println!(
            "{:>8} {:>9.3} {:>9.3} {:>9.3} {:>6} {:>9.2e} {:>9.2} {:>10.2} {:>9.2} {:>9.2} {:>9.2}",
            r.threads,
            r.setup_s,
            r.solve_s,
            r.total_s,
            r.iters,
            r.relres,
            1e3 * r.apply_s,
            1e3 * r.stencil_s,
            r.apply_s / r.stencil_s,
            r.setup_cpu_s,
            r.solve_cpu_s
        );
    }
    for r in &f.runs {
        if let (Some(apply), Some(stencil)) = (r.apply_cpu_s, r.stencil_cpu_s) {
            println!(
                "{} thread, CPU time: apply {:.2} ms, stencil {:.2} ms, apply/st. {:.2}",
                r.threads,
                1e3 * apply,
                1e3 * stencil,
                apply / stencil
            );
        }
    }
    println!(
        "apply/st.: one operator application in stencil-equivalents (one plain 7-point constant-coefficient f64 \
         stencil application on the same grid, same pool, fastest of {APPLY_REPS}); solve / stencil: {}",
        f.runs
            .iter()
            .map(|r| format!("{}t {:.0}", r.threads, r.solve_s / r.stencil_s))
            .collect::<Vec<_>>()
            .join(", ")
    );
    let per_cell = |b: usize| b as f64 / f.cells as f64;
    match f.bytes_per_cell {
        Some(b) => println!(
            "memory: peak of the transport stage {b:.1} bytes per grid cell ({:.0} MB); system {:.1} B/cell, solver (SteadySolver::memory_bytes) {:.1} B/cell",
            f.peak_transport_bytes.unwrap_or(0) as f64 / 1e6,
            per_cell(f.system_bytes),
            per_cell(f.solver_bytes)
        ),
        None => println!(
            "memory: peak not measurable here (/proc/self/clear_refs or VmHWM unavailable); system {:.1} B/cell, solver {:.1} B/cell",
            per_cell(f.system_bytes),
            per_cell(f.solver_bytes)
        ),
    }
    println!("load average after: {}", f.load_average);
}

/// `matrix coordinate real general`, 1-based, shortest round-trip decimals.
fn write_matrix_market(a: &sprs::CsMat<f64>, scale: f64, active: &[bool], path: &Path) -> Result<()> {
    let file = std::fs::File::create(path).with_context(|| format!("cannot create {}", path.display()))?;
    let mut w = BufWriter::with_capacity(1 << 20, file);
    writeln!(w, "%%MatrixMarket matrix coordinate real general")?;
    writeln!(
        w,
        "% plumefield transport system; fluid rows scaled by {scale:e} (1 / largest diagonal entry)"
    )?;
    writeln!(w, "{} {} {}", a.rows(), a.cols(), a.nnz())?;
    let csr = if a.is_csr() { a.view() } else { bail!("expected a CSR matrix") };
    for (row, values) in csr.outer_iterator().enumerate() {
        let s = if active[row] { scale } else { 1.0 };
        for (col, v) in values.iter() {
            writeln!(w, "{} {} {:e}", row + 1, col + 1, s * v)?;
        }
    }
    w.flush()?;
    Ok(())
}

/// `matrix array real general`, one column.
fn write_vector_market(v: &[f64], path: &Path) -> Result<()> {
    let file = std::fs::File::create(path).with_context(|| format!("cannot create {}", path.display()))?;
    let mut w = BufWriter::with_capacity(1 << 20, file);
    writeln!(w, "%%MatrixMarket matrix array real general")?;
    writeln!(w, "{} 1", v.len())?;
    for x in v {
        writeln!(w, "{x:e}")?;
    }
    w.flush()?;
    Ok(())
}

/// One line of `peer_solve.py` output.
#[derive(Deserialize, Debug)]
struct Peer {
    method: String,
    #[serde(default)]
    lib: Option<String>,
    #[serde(default)]
    setup_s: Option<f64>,
    #[serde(default)]
    solve_s: Option<f64>,
    #[serde(default)]
    total_s: Option<f64>,
    #[serde(default)]
    iters: Option<usize>,
    #[serde(default)]
    relres: Option<f64>,
    #[serde(default)]
    peak_rss_mb: Option<f64>,
    #[serde(default)]
    skipped: Option<String>,
}

fn compare(ours_path: &Path, peers_path: &Path) -> Result<()> {
    let ours: Figures = serde_json::from_str(
        &std::fs::read_to_string(ours_path)
            .with_context(|| format!("cannot read {}", ours_path.display()))?,
    )
    .with_context(|| format!("{} is not a plumefield-bench JSON file", ours_path.display()))?;
    let text = std::fs::read_to_string(peers_path)
        .with_context(|| format!("cannot read {}", peers_path.display()))?;
    let mut peers = Vec::new();
    for line in text.lines().filter(|l| l.trim_start().starts_with('{')) {
        // Python's json writes NaN (a failed solve's residual), which JSON lacks.
        let line = line.replace("NaN", "null");
        match serde_json::from_str::<Peer>(&line) {
            Ok(p) => peers.push(p),
            Err(e) => eprintln!("ignoring a peer line that is not a result ({e}): {line}"),
        }
    }
    let cells = ours.cells as f64;
    println!(
        "{:<16} {:<22} {:>8} {:>8} {:>8} {:>6} {:>9} {:>9}",
        "solver", "library", "setup s", "solve s", "total s", "iters", "relres", "B/cell"
    );
    let bpc = ours.bytes_per_cell.map_or("n/a".to_string(), |b| format!("{b:.0}"));
    for r in &ours.runs {
        println!(
            "{:<16} {:<22} {:>8.3} {:>8.3} {:>8.3} {:>6} {:>9.1e} {:>9}",
            format!("ours {}t", r.threads),
            "plumefield",
            r.setup_s,
            r.solve_s,
            r.total_s,
            r.iters,
            r.relres,
            bpc
        );
    }
    let mut best_peer: Option<(&str, f64)> = None;
    for p in &peers {
        if let Some(reason) = &p.skipped {
            println!("{:<16} skipped: {reason}", p.method);
            continue;
        }
        let (Some(setup), Some(solve), Some(total)) = (p.setup_s, p.solve_s, p.total_s) else {
            println!("{:<16} no timing in its output", p.method);
            continue;
        };
        let converged = p.relres.is_some_and(|r| r <= 1e-8 * 1.0001);
        println!(
            "{:<16} {:<22} {:>8.3} {:>8.3} {:>8.3} {:>6} {:>9.1e} {:>9}{}",
            p.method,
            p.lib.as_deref().unwrap_or("?"),
            setup,
            solve,
            total,
            p.iters.map_or("?".to_string(), |i| i.to_string()),
            p.relres.unwrap_or(f64::NAN),
            p.peak_rss_mb.map_or("?".to_string(), |m| format!("{:.0}*", m * 1048576.0 / cells)),
            if converged { "" } else { "  (did not reach the tolerance)" }
        );
        if converged && best_peer.map_or(true, |(_, t)| total < t) {
            best_peer = Some((p.method.as_str(), total));
        }
    }
    println!("* peer B/cell: whole-process peak RSS (matrix load included) per grid cell, as the script reports it");
    println!();
    println!(
        "ratios (peer time / our time; > 1: ours is faster), same system, same tolerance 1e-8 relative:"
    );
    for p in peers.iter().filter(|p| p.skipped.is_none()) {
        let (Some(solve), Some(total)) = (p.solve_s, p.total_s) else { continue };
        let ratios: Vec<String> = ours
            .runs
            .iter()
            .map(|r| {
                format!("{}t: total {:.2}×, solve {:.2}×", r.threads, total / r.total_s, solve / r.solve_s)
            })
            .collect();
        println!("  {:<16} {}", p.method, ratios.join("   "));
    }
    // The targets are stated for one thread (the peers run on one).
    let one = ours.runs.iter().find(|r| r.threads == 1);
    match (best_peer, one) {
        (Some((method, total)), Some(r)) => {
            let ratio = total / r.total_s;
            println!(
                "target ≥ 20× faster than the best converged peer ({method}, {total:.2} s), 1 thread: ours {:.3} s → {ratio:.1}× — {}",
                r.total_s,
                if ratio >= 20.0 { "met" } else { "NOT met" }
            );
        }
        (None, _) => println!("target ≥ 20×: no converged peer result to compare with"),
        (_, None) => println!("target ≥ 20×: no one-thread run of ours"),
    }
    match one.filter(|r| r.stencil_s > 0.0) {
        Some(r) => {
            // CPU times where measured: on a loaded machine the wall time of the longer product is inflated more.
            let (apply, stencil, clock) = match (r.apply_cpu_s, r.stencil_cpu_s) {
                (Some(a), Some(s)) if a > 0.0 && s > 0.0 => (a, s, "CPU"),
                _ => (r.apply_s, r.stencil_s, "wall"),
            };
            let ratio = apply / stencil;
            println!(
                "target one operator application ≤ 4 stencil-equivalents, 1 thread ({clock} time): {:.2} ms / {:.2} ms = {ratio:.2} — {}",
                1e3 * apply,
                1e3 * stencil,
                if ratio <= 4.0 { "met" } else { "NOT met" }
            );
        }
        None => println!("target ≤ 4 stencil-equivalents: no one-thread stencil measurement"),
    }
    match ours.bytes_per_cell {
        Some(b) => println!(
            "target ≤ 200 bytes per grid cell: {b:.0} — {}",
            if b <= 200.0 { "met" } else { "NOT met" }
        ),
        None => println!("target ≤ 200 bytes per grid cell: not measurable on this system"),
    }
    Ok(())
}
