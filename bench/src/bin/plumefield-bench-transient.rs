//! Performance figures of the transient transport solve (the `scripts/bench_transient` driver).
//!
//! `plumefield-bench-transient [--case cases/bench128.toml] [--size N] [--step 3] [--max-steps 400]
//! [--steady-reps 3] [--smoothing 2,2] [--threads 1] [--demo cases/demo.toml | --skip-demo | --demo-only]
//! [--list-steps]`
//!
//! 1. On the benchmark chamber (optionally re-gridded to N grid cells along its longest axis, same chamber and
//!    cells): the steady solve as `run` does it (`solve_steady`: assembly, multigrid setup, solve), median of
//!    `--steady-reps`, and its parts once.
//! 2. The same case switched on at t = 0 from a zero field, fixed BDF2 steps of `--step` seconds until the field
//!    is within `STEADY_DISTANCE` of the steady one (or `--max-steps`): wall and CPU time of every step (linear
//!    solve warm-started from the history projection, mass balance, sensing), its Krylov iterations, and the
//!    ratio of the mean step to the steady solve — measured in the same process, one after the other.
//! 3. The demo case run as transient from zero to steady state with adaptive steps (`stop_at_steady`), its total
//!    wall time (geometry, flow, steady reference, time loop) and step count.
//!
//! CPU time is summed over the process's threads from `/proc/self/task/*/schedstat`; on a machine shared with
//! other work it varies less than the wall time.

use anyhow::{bail, Context, Result};
use clap::Parser;
use mesh::{EmbeddedGeometry, Grid};
use plumefield::case::transient::{DEFAULT_ERROR_TOLERANCE, STEADY_DISTANCE};
use plumefield::case::Case;
use plumefield::engine::steady_case;
use plumefield_bench::{load_average, thread_cpu_seconds as cpu_seconds};
use solver::embedded::FacetStencils;
use solver::linalg::{KrylovParams, MultigridParams, SteadySolver};
use solver::post::{cell_sensing, SensingModel};
use solver::solve_case::solve_flow;
use solver::solve_transient::integrate::{outlet_concentration, sensed_rates};
use solver::solve_transient::{
    initial_state, integrate, solve_transient_case, FlowPhase, SteadyReference, StepReport, TimeStepping,
    TransientCase, TransientObserver, TransientOutput, TransientParams, TransientProblem, TransientState,
};
use solver::transport::{assemble_transport, solve_steady, TransportParams, TransportProblem};
use std::path::{Path, PathBuf};
use std::time::Instant;

#[derive(Parser)]
#[command(
    name = "plumefield-bench-transient",
    about = "Cost of a transient time step against a steady solve"
)]
struct Cli {
    /// Benchmark case (a Darcy case; its steady parameters and tolerance are used).
    #[arg(long, default_value = "cases/bench128.toml")]
    case: PathBuf,
    /// Re-grid the same chamber (and the same cells) to N grid cells along its longest axis.
    #[arg(long)]
    size: Option<usize>,
    /// Fixed time step of the step benchmark (s).
    #[arg(long, default_value_t = 3.0)]
    step: f64,
    /// Steps at most in the step benchmark (it stops earlier at steady state).
    #[arg(long, default_value_t = 400)]
    max_steps: usize,
    /// Multigrid smoothing sweeps before and after the coarse correction of the steps' preconditioner (the steady
    /// solve keeps the default 2,2).
    #[arg(long, value_delimiter = ',', default_value = "2,2")]
    smoothing: Vec<usize>,
    /// Steady solves timed (the median is the reference).
    #[arg(long, default_value_t = 3)]
    steady_reps: usize,
    /// Rayon threads.
    #[arg(long, default_value_t = 1)]
    threads: usize,
    /// Case run as transient to steady state with adaptive steps.
    #[arg(long, default_value = "cases/demo.toml")]
    demo: PathBuf,
    /// Skip the demo run.
    #[arg(long)]
    skip_demo: bool,
    /// Skip the steady solve and step benchmark (demo only).
    #[arg(long)]
    demo_only: bool,
    /// Print one line per time step.
    #[arg(long)]
    list_steps: bool,
    /// First step of the adaptive demo run (s).
    #[arg(long, default_value_t = 1.0)]
    demo_initial_step: f64,
    /// Local-error tolerance of the adaptive demo run.
    #[arg(long, default_value_t = DEFAULT_ERROR_TOLERANCE)]
    demo_tolerance: f64,
}

fn main() {
    let cli = Cli::parse();
    let result = rayon::ThreadPoolBuilder::new()
        .num_threads(cli.threads.max(1))
        .build()
        .context("cannot build the thread pool")
        .and_then(|pool| pool.install(|| run(&cli)));
    if let Err(e) = result {
        eprintln!("error: {e:#}");
        std::process::exit(1);
    }
}

/// Wall time, CPU time and Krylov iterations of every accepted step, in order.
struct StepClock {
    /// Print one line per step.
    list: bool,
    last: Instant,
    last_cpu: f64,
    seconds: Vec<f64>,
    cpu: Vec<f64>,
    iterations: Vec<usize>,
    distance: Option<f64>,
    worst_balance: f64,
}

impl TransientObserver for StepClock {
    fn step(&mut self, _: &TransientState, report: &StepReport) -> Result<(), String> {
        let now = Instant::now();
        let cpu = cpu_seconds();
        self.seconds.push((now - self.last).as_secs_f64());
        self.cpu.push(cpu - self.last_cpu);
        self.last = now;
        self.last_cpu = cpu;
        self.iterations.push(report.iterations);
        if self.list {
            println!(
                "    step {:>4}: t = {:>9.2} s, Δt = {:>8.3} s, BDF{}, {:>2} iterations, {:.3} s wall / {:.3} s CPU, distance {}",
                self.seconds.len(),
                report.time,
                report.step_size,
                report.order,
                report.iterations,
                self.seconds[self.seconds.len() - 1],
                self.cpu[self.cpu.len() - 1],
                report.distance_to_steady.map_or("-".to_string(), |d| format!("{d:.2e}"))
            );
        }
        self.distance = report.distance_to_steady;
        self.worst_balance = self.worst_balance.max(report.balance_error);
        Ok(())
    }
    fn output(&mut self, _: &TransientOutput<'_>) -> Result<(), String> {
        // Outputs are not part of a step's cost: restart the clock after them.
        self.last = Instant::now();
        self.last_cpu = cpu_seconds();
        Ok(())
    }
}

fn mean(v: &[f64]) -> f64 {
    if v.is_empty() {
        f64::NAN
    } else {
        v.iter().sum::<f64>() / v.len() as f64
    }
}

/// The case, re-gridded to `size` grid cells along the longest chamber axis when asked.
fn load_case(path: &Path, size: Option<usize>) -> Result<Case> {
    let mut case = Case::load(path)?;
    if let Some(size) = size {
        if size < 8 {
            bail!("--size needs at least 8 grid cells");
        }
        let longest = case.chamber_size.iter().copied().fold(0.0f64, f64::max);
        let spacing = longest / size as f64;
        let shape = case.chamber_size.map(|l| (l / spacing).round().max(1.0) as usize);
        case.grid = Grid::new(case.grid.origin, spacing, shape);
    }
    Ok(case)
}

fn run(cli: &Cli) -> Result<()> {
    if cli.demo_only {
        return demo(cli);
    }
    if cli.smoothing.is_empty() || cli.smoothing.len() > 2 {
        bail!("--smoothing takes PRE,POST or one count for both");
    }
    if !(cli.step > 0.0 && cli.step.is_finite()) {
        bail!("--step must be a positive number of seconds");
    }
    let case = load_case(&cli.case, cli.size)?;
    let grid = &case.grid;
    let n = grid.len();
    let multigrid = MultigridParams::default();
    let step_multigrid = MultigridParams {
        pre_smoothing: cli.smoothing[0],
        post_smoothing: cli.smoothing[cli.smoothing.len() - 1],
        ..MultigridParams::default()
    };
    println!(
        "case {} ({}): grid {:?} = {n} grid cells, spacing {:.2} um, {} cells, {} thread(s)",
        cli.case.display(),
        case.title,
        grid.shape,
        grid.spacing * 1e6,
        case.layout.cells.len(),
        cli.threads
    );
    println!("load average before: {}", load_average());

    let t = Instant::now();
    let geometry = EmbeddedGeometry::build(grid, &case.layout, case.boundaries.periodic_axes());
    let stencils = FacetStencils::build(&geometry);
    let krylov =
        KrylovParams { relative_tolerance: case.solve.tolerance, max_iterations: case.solve.max_iterations };
    let (flow, _) = solve_flow(&geometry, &stencils, &steady_case(&case), case.flow.mean_velocity)?;
    println!("geometry and flow built in {:.2} s", t.elapsed().as_secs_f64());

    // 1. One steady solve.
    let transport = TransportProblem {
        geometry: &geometry,
        stencils: &stencils,
        layout: &case.layout,
        boundaries: case.boundaries,
        ligand: case.ligand,
        face_flux: &flow.face_flux,
        far_field_speed: case.flow.mean_velocity,
    };
    let params = TransportParams { krylov: krylov.clone(), multigrid: multigrid.clone() };
    // The steady path as `run` takes it (assembly, setup, solve), `--steady-reps` times (median), then its
    // parts once more for the split.
    let mut steady = None;
    let mut repeats = Vec::new();
    for _ in 0..cli.steady_reps.max(1) {
        drop(steady.take());
        let (t, cpu) = (Instant::now(), cpu_seconds());
        steady = Some(solve_steady(&transport, &params)?);
        repeats.push(Timing { wall: t.elapsed().as_secs_f64(), cpu: cpu_seconds() - cpu });
    }
    let Some(steady) = steady else { bail!("no steady solve ran") };
    let steady_s = Timing {
        wall: numkit::quantile(&repeats.iter().map(|r| r.wall).collect::<Vec<_>>(), 0.5),
        cpu: numkit::quantile(&repeats.iter().map(|r| r.cpu).collect::<Vec<_>>(), 0.5),
    };
    let (t, cpu) = (Instant::now(), cpu_seconds());
    let assembly = assemble_transport(&transport);
    let assembly_s = Timing { wall: t.elapsed().as_secs_f64(), cpu: cpu_seconds() - cpu };
    let (t, cpu) = (Instant::now(), cpu_seconds());
    let solver = SteadySolver::new(assembly.system, multigrid.clone());
    let setup_s = Timing { wall: t.elapsed().as_secs_f64(), cpu: cpu_seconds() - cpu };
    let mut x = vec![0.0; n];
    let (t, cpu) = (Instant::now(), cpu_seconds());
    let info = solver.solve(&assembly.rhs, &mut x, &krylov)?;
    let solve_s = Timing { wall: t.elapsed().as_secs_f64(), cpu: cpu_seconds() - cpu };
    drop((solver, x));
    println!(
        "steady solve (solve_steady: assembly + multigrid setup + solve), median of {}: {} — {} iterations, relative residual {:.1e}",
        repeats.len(), steady_s, steady.iterations, steady.relative_residual
    );
    println!(
        "  repetitions: {}",
        repeats.iter().map(|r| format!("{:.3}/{:.3} s", r.wall, r.cpu)).collect::<Vec<_>>().join(", ")
    );
    println!(
        "  split (repeated): assembly {assembly_s}, setup {setup_s}, solve {solve_s} ({} iterations)",
        info.iterations
    );

    // 2. Fixed steps from zero to steady state.
    let sensing = SensingModel {
        uptake: case.ligand.uptake,
        diffusivity: case.ligand.diffusivity,
        integration_time: case.sensing.integration_time,
    };
    let problem = TransientProblem {
        geometry: &geometry,
        stencils: &stencils,
        layout: &case.layout,
        boundaries: case.boundaries,
        ligand: case.ligand,
        phases: vec![FlowPhase {
            start: 0.0,
            face_flux: &flow.face_flux,
            mean_velocity: case.flow.mean_velocity,
        }],
        secretion_start: vec![0.0; case.layout.cells.len()],
        sensing,
    };
    let steady_sensing = cell_sensing(
        &geometry,
        &case.layout,
        &steady.assembly.facets,
        &steady.concentration,
        &flow.face_flux,
        &sensing,
    );
    let reference = SteadyReference {
        sensed_rate: sensed_rates(&problem, &steady_sensing, &steady.assembly.facets),
        outlet_concentration: outlet_concentration(&problem, &flow.face_flux, &steady.concentration),
        concentration: steady.concentration.clone(),
    };
    let steady_iterations = steady.iterations;
    drop(steady);
    let end_time = cli.step * cli.max_steps as f64;
    let run_params = TransientParams {
        start_time: 0.0,
        end_time,
        stepping: TimeStepping::Fixed { step: cli.step },
        output_times: vec![end_time],
        krylov: krylov.clone(),
        multigrid: step_multigrid,
        window_start: 0.0,
        readable_error: 1.0,
        steady: Some(reference),
        stop_at_steady: Some(STEADY_DISTANCE),
        switched_on_far_field: true,
        split_cells: Vec::new(),
    };
    let state = initial_state(&problem, &run_params, vec![0.0; n]);
    let mut clock = StepClock {
        list: cli.list_steps,
        last: Instant::now(),
        last_cpu: cpu_seconds(),
        seconds: Vec::new(),
        cpu: Vec::new(),
        iterations: Vec::new(),
        distance: None,
        worst_balance: 0.0,
    };
    let t = Instant::now();
    let state = integrate(&problem, &run_params, state, &mut clock)?;
    let loop_s = t.elapsed().as_secs_f64();
    let steps = clock.seconds.len();
    if steps < 2 {
        bail!("the step benchmark took {steps} step(s); choose a smaller --step");
    }
    let wall_later = &clock.seconds[1..];
    let cpu_later = &clock.cpu[1..];
    let step_mean = Timing { wall: mean(wall_later), cpu: mean(cpu_later) };
    let step_max = Timing { wall: max(wall_later), cpu: max(cpu_later) };
    let first = Timing { wall: clock.seconds[0], cpu: clock.cpu[0] };
    let iterations: Vec<f64> = clock.iterations.iter().map(|&i| i as f64).collect();
    let reached = if state.stopped_at_steady {
        format!(
            "reached steady state (relative L2 distance ≤ {STEADY_DISTANCE:.0e}) at t = {:.0} s",
            state.time
        )
    } else {
        format!(
            "stopped at t = {:.0} s before steady state (distance {:.1e}); raise --max-steps or --step",
            state.time,
            clock.distance.unwrap_or(f64::NAN)
        )
    };
    println!();
    println!(
        "time steps: fixed Δt = {} s, BDF2 (first step BDF1), from zero; {steps} steps, {reached}",
        cli.step
    );
    println!(
        "  first step (phase assembly + first multigrid hierarchy + solve): {first}, {} iterations",
        clock.iterations[0]
    );
    println!("  steps 2..{steps}: mean {step_mean}; max {step_max} (the BDF2 hierarchy is built in step 2)");
    println!(
        "  Krylov iterations per step: mean {:.2}, max {} (the steady solve: {}); per step: {}",
        mean(&iterations),
        clock.iterations.iter().copied().max().unwrap_or(0),
        steady_iterations,
        histogram(&clock.iterations)
    );
    println!(
        "  whole loop {loop_s:.2} s wall for {steps} steps; worst step mass-balance relative error {:.1e}",
        clock.worst_balance
    );
    let ratio = |a: &Timing, b: &Timing| Timing { wall: a.wall / b.wall, cpu: a.cpu / b.cpu };
    let mean_ratio = ratio(&step_mean, &steady_s);
    println!(
        "ratio mean step / steady solve = {} (target ≤ 0.2 — {} on CPU time)",
        mean_ratio.ratios(),
        if mean_ratio.cpu <= 0.2 { "met" } else { "NOT met" }
    );
    println!(
        "  max step / steady solve = {}; mean step / (setup + solve) = {}; loop / steady solve = {:.1} (wall)",
        ratio(&step_max, &steady_s).ratios(),
        ratio(&step_mean, &Timing { wall: setup_s.wall + solve_s.wall, cpu: setup_s.cpu + solve_s.cpu }).ratios(),
        loop_s / steady_s.wall
    );
    println!("load average after the step benchmark: {}", load_average());

    // 3. The demo to steady state.
    if !cli.skip_demo {
        demo(cli)?;
    }
    Ok(())
}

fn max(v: &[f64]) -> f64 {
    v.iter().copied().fold(f64::NAN, f64::max)
}

/// `"3×5, 10×4, …"`: how many steps took each iteration count, most iterations first.
fn histogram(iterations: &[usize]) -> String {
    let top = iterations.iter().copied().max().unwrap_or(0);
    (0..=top)
        .rev()
        .filter_map(|i| {
            let count = iterations.iter().filter(|&&j| j == i).count();
            (count > 0).then(|| format!("{count}×{i}"))
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// Wall and CPU seconds of one piece of work (CPU summed over threads).
struct Timing {
    wall: f64,
    cpu: f64,
}

impl std::fmt::Display for Timing {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{:.3} s wall / {:.3} s CPU", self.wall, self.cpu)
    }
}

impl Timing {
    fn ratios(&self) -> String {
        format!("{:.3} (wall) / {:.3} (CPU)", self.wall, self.cpu)
    }
}

fn demo(cli: &Cli) -> Result<()> {
    let case = Case::load(&cli.demo)?;
    let end_time = 24.0 * 3600.0;
    let params = TransientParams {
        start_time: 0.0,
        end_time,
        stepping: TimeStepping::Adaptive {
            initial_step: cli.demo_initial_step,
            tolerance: cli.demo_tolerance,
            max_step: end_time,
        },
        output_times: vec![end_time],
        krylov: KrylovParams {
            relative_tolerance: case.solve.tolerance,
            max_iterations: case.solve.max_iterations,
        },
        multigrid: MultigridParams::default(),
        window_start: 0.0,
        readable_error: 1.0,
        steady: None,
        stop_at_steady: Some(STEADY_DISTANCE),
        switched_on_far_field: true,
        split_cells: Vec::new(),
    };
    let transient = TransientCase {
        steady: steady_case(&case),
        flow_changes: Vec::new(),
        secretion_start: vec![0.0; case.layout.cells.len()],
        params,
    };
    println!();
    println!(
        "demo {} ({}): grid {:?} = {} grid cells, {} cells; adaptive BDF2 from zero, first step {} s, local-error tolerance {:.0e}, stop at steady state (distance ≤ {STEADY_DISTANCE:.0e})",
        cli.demo.display(),
        case.title,
        case.grid.shape,
        case.grid.len(),
        case.layout.cells.len(),
        cli.demo_initial_step,
        cli.demo_tolerance
    );
    let mut clock = StepClock {
        list: cli.list_steps,
        last: Instant::now(),
        last_cpu: cpu_seconds(),
        seconds: Vec::new(),
        cpu: Vec::new(),
        iterations: Vec::new(),
        distance: None,
        worst_balance: 0.0,
    };
    let t = Instant::now();
    let solution = solve_transient_case(&transient, None, None, &mut clock, &mut |_| {})?;
    let total = t.elapsed().as_secs_f64();
    let solver::solve_transient::TransientTiming { geometry, flow, steady_reference: steady, time_loop } =
        solution.timing;
    let state = &solution.state;
    println!(
        "  {} at t = {:.0} s: {} steps ({} rejected), {} Krylov iterations, worst balance error {:.1e}",
        if state.stopped_at_steady { "steady state reached" } else { "NOT at steady state" },
        state.time,
        state.steps,
        state.rejected_steps,
        state.krylov_iterations,
        clock.worst_balance
    );
    println!(
        "  demo wall time {total:.1} s = geometry {geometry:.1} + flow {flow:.1} + steady reference {steady:.1} + time loop {time_loop:.1} s; time loop / steady reference = {:.2}",
        time_loop / steady
    );
    println!("load average after the demo: {}", load_average());
    Ok(())
}
