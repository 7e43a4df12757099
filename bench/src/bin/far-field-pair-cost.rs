//! Cost of the superposed far-field condition (`far_field_sources = "cells"`) on every side of an N³ box
//! (h = 2 µm, far-field faces on all six sides), random cells, one thread: the direct sum per (face, source)
//! pair (timed on a sample of faces), the patch sums of all faces, and the largest relative difference of
//! β − (U/2D) ê_x·n between the two on the sampled faces.
//!
//! `cargo run --release -p plumefield-bench --bin far-field-pair-cost -- [N] [CELLS …]` (default 256 1000)

use mesh::{Cell, EmbeddedGeometry, Grid, Layout};
use solver::problem::FarFieldSources;
use solver::transport::far_field_sources::{FarFieldMedium, FarFieldPoint, FarFieldSumParams, PointSources};
use std::time::Instant;

fn main() -> anyhow::Result<()> {
    let args: Vec<usize> = std::env::args().skip(1).map(|a| a.parse()).collect::<Result<_, _>>()?;
    let n = args.first().copied().unwrap_or(256);
    let counts = if args.len() > 1 { args[1..].to_vec() } else { vec![1000] };
    let h = 2e-6;
    let side = n as f64 * h;
    let points = box_faces(n, h);
    // One thread, so the CPU time of this thread is the whole cost.
    let pool = rayon::ThreadPoolBuilder::new().num_threads(1).build()?;
    let medium = FarFieldMedium::new(1e-6, 1e-10, 1e-4, h);
    println!("{n}^3 box, {} far-field faces, gamma {:.0} /m", points.len(), medium.gamma);
    for count in counts {
        let sources = random_sources(count, side);
        // Every 97th face for the direct sum (a prime stride samples all sides and positions).
        let sample: Vec<usize> = (0..points.len()).step_by(97).collect();
        let (direct, direct_cpu) = pool.install(|| {
            timed(|| {
                sample
                    .iter()
                    .map(|&i| {
                        sources.steady_log_gradient(
                            &medium,
                            points[i].centre,
                            points[i].axis,
                            points[i].outward,
                        )
                    })
                    .collect::<Vec<f64>>()
            })
        });
        let per_pair_ns = direct_cpu * 1e9 / (sample.len() * count) as f64;
        let direct_all = per_pair_ns * 1e-9 * (points.len() * count) as f64;
        let mut params = FarFieldSumParams { direct_below_pairs: 0.0, ..FarFieldSumParams::default() };
        // Study overrides: FF_DEGREE, FF_TOLERANCE, FF_LEAF.
        let var = |name: &str| std::env::var(name).ok().and_then(|v| v.parse::<f64>().ok());
        params.patches.degree = var("FF_DEGREE").map_or(params.patches.degree, |v| v as usize);
        params.patches.tolerance = var("FF_TOLERANCE").unwrap_or(params.patches.tolerance);
        params.patches.leaf_faces = var("FF_LEAF").map_or(params.patches.leaf_faces, |v| v as usize);
        let (fast, fast_cpu) =
            pool.install(|| timed(|| sources.steady_log_gradients(&medium, &points, &params)));
        let along = |p: &FarFieldPoint| {
            if p.axis == 0 {
                medium.speed / (2.0 * medium.diffusivity) * p.outward
            } else {
                0.0
            }
        };
        let worst = sample
            .iter()
            .zip(&direct)
            .map(|(&i, d)| (fast[i] - d).abs() / (d - along(&points[i])).abs())
            .fold(0.0, f64::max);
        println!(
            "{count} cells, p {} tolerance {:.0e} leaf {}: direct {per_pair_ns:.1} ns CPU per pair = {direct_all:.1} s for all faces; patch sums \
             {fast_cpu:.2} s CPU ({:.0}x); largest relative difference of the source part of beta {worst:.1e} \
             (bound {:.1e})",
            params.patches.degree,
            params.patches.tolerance,
            params.patches.leaf_faces,
            direct_all / fast_cpu,
            2.0 * params.patches.tolerance / (1.0 - params.patches.tolerance)
        );
    }
    println!("load average {}", plumefield_bench::load_average());
    Ok(())
}

/// Runs `f`, returning its value and this thread's CPU seconds.
fn timed<T>(f: impl FnOnce() -> T) -> (T, f64) {
    let cpu = || numkit::meter::this_thread().map_or(f64::NAN, |t| t.cpu_s);
    let (start_cpu, start) = (cpu(), Instant::now());
    let value = f();
    let spent = cpu() - start_cpu;
    (value, if spent.is_finite() { spent } else { start.elapsed().as_secs_f64() })
}

/// The face centres of all six sides of an n³ grid of spacing h.
fn box_faces(n: usize, h: f64) -> Vec<FarFieldPoint> {
    let mut points = Vec::with_capacity(6 * n * n);
    for axis in 0..3 {
        for (outward, position) in [(-1.0, 0.0), (1.0, n as f64 * h)] {
            for i in 0..n {
                for j in 0..n {
                    let mut centre = [0.0; 3];
                    centre[axis] = position;
                    centre[(axis + 1) % 3] = (i as f64 + 0.5) * h;
                    centre[(axis + 2) % 3] = (j as f64 + 0.5) * h;
                    points.push(FarFieldPoint { centre, axis, outward });
                }
            }
        }
    }
    points
}

/// `count` secreting cells at seeded random positions in a cube of edge `side`, equal rates.
fn random_sources(count: usize, side: f64) -> PointSources {
    let mut rng = numkit::Xoshiro256StarStar::seed_from_u64(15);
    let mut next = move || rng.next_f64();
    let cells: Vec<Cell> = (0..count)
        .map(|id| Cell {
            id,
            centre: [next() * side, next() * side, next() * side],
            radius: 1e-6,
            secretion_rate: 1.0,
        })
        .collect();
    let layout = Layout { cells };
    let geometry = EmbeddedGeometry::build(&Grid::new([0.0; 3], 1e-6, [4, 4, 4]), &layout, [false; 3]);
    PointSources::new(&geometry, &layout, FarFieldSources::Cells, None)
}
