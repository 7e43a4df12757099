//! Cost of one (face, source) pair of the superposed far-field condition: 1000 point sources on a 10×10×10
//! lattice, 10 000 boundary faces, one thread; wall and CPU nanoseconds per pair.
//!
//! `cargo run --release -p plumefield-bench --bin far-field-pair-cost`

use mesh::{Cell, EmbeddedGeometry, Grid, Layout};
use numkit::meter;
use solver::problem::FarFieldSources;
use solver::transport::far_field_sources::{FarFieldMedium, PointSources};
use std::time::Instant;

fn main() {
    let cells: Vec<Cell> = (0..1000)
        .map(|i| Cell {
            id: i,
            centre: [(i % 10) as f64 * 1e-5, (i / 10 % 10) as f64 * 1e-5, (i / 100) as f64 * 1e-5],
            radius: 1e-6,
            secretion_rate: 1.0,
        })
        .collect();
    let layout = Layout { cells };
    let geometry = EmbeddedGeometry::build(&Grid::new([0.0; 3], 1e-6, [4, 4, 4]), &layout, [false; 3]);
    let sources = PointSources::new(&geometry, &layout, FarFieldSources::Cells, None);
    let medium = FarFieldMedium::new(2e-6, 1e-10, 1e-4, 1e-6);
    let faces = 10_000;
    // CPU time of this thread, so a loaded machine does not inflate it.
    let cpu = || meter::this_thread().map_or(f64::NAN, |t| t.cpu_s * 1e9);
    let (cpu0, started) = (cpu(), Instant::now());
    let mut checksum = 0.0;
    for f in 0..faces {
        let x = [2e-4, (f % 100) as f64 * 2e-6, (f / 100) as f64 * 2e-6];
        checksum += sources.steady_log_gradient(&medium, x, 0, 1.0);
    }
    let pairs = (faces * layout.cells.len()) as f64;
    let wall_ns = started.elapsed().as_secs_f64() * 1e9 / pairs;
    let cpu_ns = (cpu() - cpu0) / pairs;
    println!("{wall_ns:.1} ns wall, {cpu_ns:.1} ns CPU per (face, source) pair on one thread (checksum {checksum:.3e})");
    println!("load average {}", plumefield_bench::load_average());
}
