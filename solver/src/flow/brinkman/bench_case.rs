//! Timing study of the `scripts/bench_brinkman` chamber in-process (ignored, prints): flow and transport times,
//! flow iterations, and the peak resident memory of each stage (Linux `VmHWM`, reset between stages).
//!
//! `PLUMEFIELD_BENCH_SIZE=128 cargo test --release -p solver bench_case -- --ignored --nocapture`

use crate::embedded::FacetStencils;
use crate::flow::brinkman::{solve_brinkman, BrinkmanMedium, BrinkmanSettings};
use crate::problem::{ChamberBoundaries, ChamberFace, LigandParameters, SurfaceUptake};
use crate::transport::{solve_steady, TransportProblem, TransportSettings};
use mesh::{random_sequential_addition, ChamberBox, EmbeddedGeometry, Grid, RandomLayout, RandomTarget};
use std::time::Instant;

/// Peak resident set (bytes) since the last reset; 0 where /proc is missing.
fn peak_rss() -> usize {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1).and_then(|v| v.parse::<usize>().ok()))
        })
        .map_or(0, |kb| kb * 1024)
}

/// Current resident set (bytes).
fn current_rss() -> usize {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmRSS:"))
                .and_then(|l| l.split_whitespace().nth(1).and_then(|v| v.parse::<usize>().ok()))
        })
        .map_or(0, |kb| kb * 1024)
}

fn reset_peak_rss() {
    let _ = std::fs::write("/proc/self/clear_refs", "5");
}

#[test]
#[ignore = "timing study of the 128³ benchmark chamber, prints; size from PLUMEFIELD_BENCH_SIZE"]
fn bench_case() {
    let size: usize = std::env::var("PLUMEFIELD_BENCH_SIZE").ok().and_then(|s| s.parse().ok()).unwrap_or(64);
    let (grid, layout, boundaries, medium) = bench_setup(size);
    let base = peak_rss();
    let geometry = EmbeddedGeometry::build(&grid, &layout, [false; 3]);
    let stencils = FacetStencils::build(&geometry);
    let after_geometry = peak_rss();
    let settings = BrinkmanSettings::default();
    reset_peak_rss();
    let t = Instant::now();
    let flow =
        solve_brinkman(&geometry, &layout, &boundaries, &medium, 1e-6, &settings).expect("flow solves");
    let t_flow = t.elapsed().as_secs_f64();
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
    reset_peak_rss();
    let t = Instant::now();
    let transport = solve_steady(&problem, &TransportSettings::default()).expect("transport solves");
    let t_transport = t.elapsed().as_secs_f64();
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
    println!("flow stages (assembly, iterations, post) {:.2?} s", flow.stage_seconds);
    println!("transport {t_transport:.2} s, {} iterations", transport.iterations);
    println!("flow/transport {:.1}", t_flow / t_transport);
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
fn sphere_iterations(n: usize, alpha: f64, settings: &BrinkmanSettings) -> (usize, f64) {
    use mesh::{Cell, Layout};
    let grid = Grid::new([0.0; 3], 1.0 / n as f64, [n, n, n]);
    let radius = 0.2;
    let layout = Layout { cells: vec![Cell { id: 0, centre: [0.5; 3], radius, secretion_rate: 0.0 }] };
    let boundaries = ChamberBoundaries::new([[ChamberFace::Periodic; 2]; 3]);
    let k = (radius / alpha) * (radius / alpha);
    let medium = BrinkmanMedium { viscosity: 1.0, effective_viscosity: 1.0, permeability: Some(k) };
    let geometry = EmbeddedGeometry::build(&grid, &layout, boundaries.periodic_axes());
    let t = Instant::now();
    let sol = solve_brinkman(&geometry, &layout, &boundaries, &medium, 1.0, settings).expect("solves");
    (sol.field.iterations, t.elapsed().as_secs_f64())
}

#[test]
#[ignore = "iteration study, prints"]
fn iteration_study() {
    use crate::linalg::{Cycle, Prolongation};
    let mut settings = BrinkmanSettings::default();
    let var = |k: &str| std::env::var(k).unwrap_or_default();
    if var("PF_PROLONG") == "tri" {
        settings.multigrid.prolongation = Prolongation::Trilinear;
    }
    if var("PF_CYCLE") == "W" {
        settings.multigrid.cycle = Cycle::W;
    }
    if let Ok(s) = var("PF_SMOOTH").parse::<usize>() {
        settings.multigrid.pre_smoothing = s;
        settings.multigrid.post_smoothing = s;
    }
    let sizes: Vec<usize> = var("PF_SIZES").split(',').filter_map(|s| s.parse().ok()).collect();
    for n in sizes {
        for alpha in [0.3, 1.0, 3.0, 10.0, 30.0] {
            let (it, t) = sphere_iterations(n, alpha, &settings);
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

/// [`bench_setup`] with its embedded geometry built.
fn bench_chamber(size: usize) -> (EmbeddedGeometry, mesh::Layout, ChamberBoundaries, BrinkmanMedium) {
    let (grid, layout, boundaries, medium) = bench_setup(size);
    let geometry = EmbeddedGeometry::build(&grid, &layout, [false; 3]);
    (geometry, layout, boundaries, medium)
}

#[test]
#[ignore = "timing of the solver's parts on the bench chamber, prints; size from PLUMEFIELD_BENCH_SIZE"]
fn part_timing() {
    use super::solve_brinkman::assemble_saddle;
    let size: usize = std::env::var("PLUMEFIELD_BENCH_SIZE").ok().and_then(|s| s.parse().ok()).unwrap_or(64);
    let (geometry, layout, boundaries, medium) = bench_chamber(size);
    let settings = BrinkmanSettings::default();
    let cells = geometry.grid.len() as f64;
    println!("RSS before assembly {:.0} B/cell", current_rss() as f64 / cells);
    reset_peak_rss();
    let t = Instant::now();
    let mut timings = Vec::new();
    let (system, rhs, _) =
        assemble_saddle(&geometry, &layout, &boundaries, &medium, 1e-6, &settings, &mut timings)
            .expect("assembles");
    println!("{timings:?}");
    println!("assembly + hierarchies {:.3} s", t.elapsed().as_secs_f64());
    println!(
        "assembly peak {:.0} B/cell, after {:.0} B/cell, solver-counted {:.0} B/cell",
        peak_rss() as f64 / cells,
        current_rss() as f64 / cells,
        system.memory_bytes() as f64 / cells
    );
    let best = |f: &mut dyn FnMut()| {
        (0..3)
            .map(|_| {
                let t = Instant::now();
                f();
                t.elapsed().as_secs_f64()
            })
            .fold(f64::INFINITY, f64::min)
    };
    let rhs_sparse = rhs;
    let rhs = rhs_sparse.to_dense();
    let mut y = vec![0.0; rhs.len()];
    let mut work = system.work();
    println!("apply {:.3} s", best(&mut || system.apply(&rhs, &mut y)));
    println!("precondition {:.3} s", best(&mut || system.precondition(&rhs, &mut y, &mut work)));
    let ranges = system.ranges();
    for c in 0..4 {
        let r: Vec<f64> = rhs[ranges[c].clone()].iter().map(|v| v + 1e-9).collect();
        let mut z = vec![0.0; r.len()];
        println!("V-cycle part {c}: {:.3} s", best(&mut || system.cycle_part(c, &r, &mut z, &mut work)));
    }
    for c in 0..4 {
        println!("apply part {c}: {:.3} s", best(&mut || system.apply_part(c, &rhs, &mut y)));
    }
    drop(y);
    reset_peak_rss();
    let mut x = vec![0.0; rhs.len()];
    let t = Instant::now();
    let info = crate::linalg::bicgstab(
        &|v: &[f64], y: &mut [f64]| system.apply(v, y),
        |r, z| system.precondition(r, z, &mut work),
        crate::linalg::RightHandSide::Sparse(&rhs_sparse),
        &mut x,
        &crate::linalg::BicgstabParams {
            krylov: settings.krylov.clone(),
            shadow: crate::linalg::Shadow::Unstored,
        },
        &mut crate::linalg::BicgstabWork::default(),
    )
    .expect("solves");
    println!(
        "bicgstab {} iterations {:.2} s, peak {:.0} B/cell, after {:.0} B/cell",
        info.iterations,
        t.elapsed().as_secs_f64(),
        peak_rss() as f64 / cells,
        current_rss() as f64 / cells
    );
    let a = rhs.clone();
    let mut b = rhs.clone();
    let dot = |x: &[f64], y: &[f64]| x.iter().zip(y).map(|(a, b)| a * b).sum::<f64>();
    println!(
        "serial dot {:.4} s",
        best(&mut || {
            std::hint::black_box(dot(&a, &b));
        })
    );
    println!("axpy {:.4} s", best(&mut || b.iter_mut().zip(&a).for_each(|(b, a)| *b += 0.5 * a)));
}
