//! Timing studies of the Brinkman flow solve in-process (the whole-process figure is `scripts/bench_brinkman`):
//!
//! - `brinkman-stages stages [SIZE]`: the `scripts/bench_brinkman` chamber of SIZE³ grid cells (default 64):
//!   flow and transport times (wall and CPU), flow iterations, and the peak resident memory of each stage
//!   (Linux `VmHWM`, reset between stages); `PF_INNER=1e-3` sets the inner tolerance of the refinement,
//!   `PF_SMOOTH=N` the multigrid sweeps, `PF_FINEST=stored` stores the finest velocity multigrid levels.
//! - `brinkman-stages iterations SIZE,SIZE,…`: outer iterations of a sphere (a = 0.2) in a periodic unit box per
//!   grid size and α = a/√K; `PF_PROLONG=tri`, `PF_CYCLE=W`, `PF_SMOOTH=N` change the multigrid parameters.
//!
//! `cargo run --release -p plumefield-bench --bin brinkman-stages -- stages 128`

use mesh::{random_sequential_addition, ChamberBox, EmbeddedGeometry, Grid, RandomLayout, RandomTarget};
use numkit::meter;
use plumefield_bench::process_cpu_seconds;
use solver::embedded::FacetStencils;
use solver::flow::brinkman::{solve_brinkman, BrinkmanMedium, BrinkmanParams};
use solver::problem::{ChamberBoundaries, ChamberFace, LigandParameters, SurfaceUptake};
use solver::transport::{solve_steady, TransportParams, TransportProblem};
use std::time::Instant;

/// Peak resident set (bytes) since the last reset; 0 where /proc is missing.
fn peak_rss() -> u64 {
    meter::peak_resident_bytes().unwrap_or(0)
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    match args.first().map(String::as_str) {
        Some("stages") => stages(args.get(1).and_then(|s| s.parse().ok()).unwrap_or(64)),
        Some("iterations") => {
            let sizes = args.get(1).map_or(String::new(), String::clone);
            iteration_study(sizes.split(',').filter_map(|s| s.parse().ok()).collect())
        }
        _ => {
            eprintln!("usage: brinkman-stages stages [SIZE] | brinkman-stages iterations SIZE,SIZE,...");
            std::process::exit(2);
        }
    }
}

fn stages(size: usize) {
    let (grid, layout, boundaries, medium) = bench_setup(size);
    let base = peak_rss();
    let geometry = EmbeddedGeometry::build(&grid, &layout, [false; 3]);
    let stencils = FacetStencils::build(&geometry);
    let after_geometry = peak_rss();
    let mut params = BrinkmanParams::default();
    if let Ok(inner) = std::env::var("PF_INNER").unwrap_or_default().parse::<f64>() {
        params.inner_tolerance = inner;
    }
    if let Ok(sweeps) = std::env::var("PF_SMOOTH").unwrap_or_default().parse::<usize>() {
        params.multigrid.pre_smoothing = sweeps;
        params.multigrid.post_smoothing = sweeps;
    }
    if std::env::var("PF_FINEST").is_ok_and(|v| v == "stored") {
        params.finest_from_rows = false;
    }
    meter::reset_peak_resident();
    let t = Instant::now();
    let cpu = process_cpu_seconds();
    let flow = solve_brinkman(&geometry, &layout, &boundaries, &medium, 1e-6, &params).expect("flow solves");
    let t_flow = t.elapsed().as_secs_f64();
    let cpu_flow = process_cpu_seconds() - cpu;
    let flow_peak = peak_rss();
    let ligand = LigandParameters {
        diffusivity: 1e-10,
        decay_rate: 1e-4,
        inlet_concentration: 0.0,
        uptake: SurfaceUptake::FirstOrder { rate_constant: 1e-6 },
    };
    let problem = TransportProblem {
        geometry: &geometry,
        stencils: &stencils,
        layout: &layout,
        boundaries,
        ligand,
        face_flux: &flow.field.face_flux,
        far_field_speed: 1e-6,
    };
    meter::reset_peak_resident();
    let t = Instant::now();
    let cpu = process_cpu_seconds();
    let transport = solve_steady(&problem, &TransportParams::default()).expect("transport solves");
    let t_transport = t.elapsed().as_secs_f64();
    let cpu_transport = process_cpu_seconds() - cpu;
    let transport_peak = peak_rss();
    let cells = grid.len() as f64;
    println!("grid {size}^3, {} cells", layout.cells.len());
    println!(
        "flow {t_flow:.2} s, {} iterations, residual {:.2e}, divergence {:.2e}, solver-counted {:.0} B/cell",
        flow.field.iterations,
        flow.field.relative_residual,
        flow.field.max_divergence,
        flow.memory_bytes as f64 / cells
    );
    let s = flow.stage_seconds;
    println!("flow stages (assembly, iterations, post) {:.2?} s", [s.assembly, s.iterations, s.post]);
    println!("transport {t_transport:.2} s, {} iterations", transport.iterations);
    println!("flow/transport {:.1} wall", t_flow / t_transport);
    println!(
        "CPU s (user + sys of the process): flow {cpu_flow:.2}, transport {cpu_transport:.2}, flow/transport {:.2}",
        cpu_flow / cpu_transport
    );
    println!(
        "peak RSS B/cell: before geometry {:.0}, after geometry {:.0}, flow stage {:.0}, transport stage {:.0}",
        base as f64 / cells,
        after_geometry as f64 / cells,
        flow_peak as f64 / cells,
        transport_peak as f64 / cells
    );
    let history = &flow.residual_history;
    println!("flow residual history (every 5th): {:?}", history.iter().step_by(5).collect::<Vec<_>>());
}

/// Outer iterations of a sphere (a = 0.2) in a periodic unit box, per grid size and α = a/√K.
fn sphere_iterations(n: usize, alpha: f64, params: &BrinkmanParams) -> (usize, f64) {
    use mesh::{Cell, Layout};
    let grid = Grid::new([0.0; 3], 1.0 / n as f64, [n, n, n]);
    let radius = 0.2;
    let layout = Layout { cells: vec![Cell { id: 0, centre: [0.5; 3], radius, secretion_rate: 0.0 }] };
    let boundaries = ChamberBoundaries::new([[ChamberFace::Periodic; 2]; 3]);
    let k = (radius / alpha) * (radius / alpha);
    let medium = BrinkmanMedium { viscosity: 1.0, effective_viscosity: 1.0, permeability: Some(k) };
    let geometry = EmbeddedGeometry::build(&grid, &layout, boundaries.periodic_axes());
    let t = Instant::now();
    let sol = solve_brinkman(&geometry, &layout, &boundaries, &medium, 1.0, params).expect("solves");
    (sol.field.iterations, t.elapsed().as_secs_f64())
}

fn iteration_study(sizes: Vec<usize>) {
    use solver::linalg::{Cycle, Prolongation};
    let mut params = BrinkmanParams::default();
    let var = |k: &str| std::env::var(k).unwrap_or_default();
    if var("PF_PROLONG") == "tri" {
        params.multigrid.prolongation = Prolongation::Trilinear;
    }
    if var("PF_CYCLE") == "W" {
        params.multigrid.cycle = Cycle::W;
    }
    if let Ok(s) = var("PF_SMOOTH").parse::<usize>() {
        params.multigrid.pre_smoothing = s;
        params.multigrid.post_smoothing = s;
    }
    for n in sizes {
        for alpha in [0.3, 1.0, 3.0, 10.0, 30.0] {
            let (it, t) = sphere_iterations(n, alpha, &params);
            println!("n {n} alpha {alpha}: {it} iterations, {t:.2} s");
        }
    }
}

/// The bench chamber of `size³` grid cells (h = 2 µm, ~200 cells at 128³): grid, layout, boundaries, medium.
fn bench_setup(size: usize) -> (Grid, mesh::Layout, ChamberBoundaries, BrinkmanMedium) {
    let h = 2e-6;
    let extent = size as f64 * h;
    let count = (200 * size * size * size / (128 * 128 * 128)).max(1);
    let chamber = ChamberBox { lower: [0.0; 3], upper: [extent; 3], periodic: [false; 3] };
    let spec = RandomLayout {
        target: RandomTarget::Count(count),
        radius: 8e-6,
        secretion_rate: 2000.0 / 3600.0,
        min_gap: 2e-6,
        seed: 11,
    };
    let layout = random_sequential_addition(&spec, &chamber).expect("layout");
    let grid = Grid::new([0.0; 3], h, [size; 3]);
    let boundaries = ChamberBoundaries::new([
        [ChamberFace::Inlet, ChamberFace::Outlet],
        [ChamberFace::Wall, ChamberFace::Wall],
        [ChamberFace::Symmetry, ChamberFace::Symmetry],
    ]);
    let medium = BrinkmanMedium { viscosity: 1e-3, effective_viscosity: 1e-3, permeability: Some(1.6e-11) };
    (grid, layout, boundaries, medium)
}
