//! Times the steady multigrid-preconditioned BiCGSTAB solve on a box with spherical holes and a potential flow,
//! and reports iterations, wall time and memory per grid cell.
//!
//! `cargo run --release -p plumefield-bench --bin steady-solve-timing -- [n] [holes] [peclet] [constant|trilinear]
//! [pre] [post]`; defaults: 128 cells per side, 200 holes of radius 4.5 h, cell Péclet number 1.5.

use plumefield_bench::process_cpu_seconds as cpu_seconds;
use solver::linalg::test_problems::{box_with_holes, random_holes};
use solver::linalg::{
    system_memory_bytes, AdvectionScheme, KrylovParams, LinearSystem, MultigridParams, Prolongation,
    SteadySolver,
};
use std::time::Instant;

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let arg = |i: usize, default: f64| args.get(i).and_then(|s| s.parse::<f64>().ok()).unwrap_or(default);
    let n = arg(0, 128.0) as usize;
    let holes = arg(1, 200.0) as usize;
    let peclet = arg(2, 1.5);
    let prolongation = match args.get(3).map(String::as_str) {
        Some("trilinear") => Prolongation::Trilinear,
        _ => Prolongation::Constant,
    };
    let params = MultigridParams {
        prolongation,
        pre_smoothing: arg(4, 2.0) as usize,
        post_smoothing: arg(5, 2.0) as usize,
        ..MultigridParams::default()
    };
    let t = Instant::now();
    let op = box_with_holes(n, &random_holes(holes, 4.5 / n as f64, 11), peclet);
    let active = op.active.iter().filter(|&&a| a).count();
    println!(
        "grid {n}^3, {holes} holes, cell Péclet {peclet}, active cells {active}; problem built in {:.2} s",
        t.elapsed().as_secs_f64()
    );
    let h3 = (1.0 / n as f64).powi(3);
    let rhs: Vec<f64> = op.active.iter().map(|&a| if a { h3 } else { 0.0 }).collect();
    let system = LinearSystem { operator: op, scheme: AdvectionScheme::Central, correction: None };
    let system_bytes = system_memory_bytes(&system);
    let t = Instant::now();
    let solver = SteadySolver::new(system, params.clone());
    let setup = t.elapsed().as_secs_f64();
    let mut x = vec![0.0; rhs.len()];
    let t = Instant::now();
    let cpu = cpu_seconds();
    let result = solver.solve(&rhs, &mut x, &KrylovParams::default());
    let solve = t.elapsed().as_secs_f64();
    let solve_cpu = cpu_seconds() - cpu;
    let cells = rhs.len() as f64;
    let bytes = system_bytes + solver.memory_bytes() + 16 * rhs.len();
    match result {
        Ok(info) => {
            println!(
                "{:?} prolongation, {}+{} sweeps, {} levels: {} iterations, relative residual {:.2e}",
                params.prolongation,
                params.pre_smoothing,
                params.post_smoothing,
                solver.levels(),
                info.iterations,
                info.relative_residual
            );
            println!(
                "history {:?}",
                info.residual_history.iter().map(|r| format!("{r:.1e}")).collect::<Vec<_>>()
            );
        }
        Err(e) => println!("FAILED: {e}"),
    }
    println!(
        "setup {setup:.3} s, solve {solve:.3} s wall ({solve_cpu:.2} s CPU), threads {}",
        rayon::current_num_threads()
    );
    println!(
        "memory: system {:.1} B/cell, solver {:.1} B/cell, rhs+x 16 B/cell, total {:.1} B/cell",
        system_bytes as f64 / cells,
        solver.memory_bytes() as f64 / cells,
        bytes as f64 / cells
    );
}
