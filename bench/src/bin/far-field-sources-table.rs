//! Two secreting spheres in a far-field box: the anisotropy of each against the method-of-reflections value,
//! with the far-field condition fed by one centroid source or by every cell (superposition), over distances,
//! resolutions and box margins. Minutes.
//!
//! `cargo run --release -p plumefield-bench --bin far-field-sources-table`

use solver::problem::FarFieldSources;
use validation::cases::two_spheres::{reflection_anisotropy, solve_pair, RADIUS};

fn main() -> anyhow::Result<()> {
    // (centre distance / a, a / h, box margin / a)
    let runs: &[(f64, f64, f64)] = &[
        (3.0, 5.0, 6.0),
        (5.0, 5.0, 6.0),
        (10.0, 5.0, 6.0),
        (10.0, 5.0, 10.0),
        (3.0, 5.0, 3.0),
        (5.0, 5.0, 4.0),
        (10.0, 5.0, 4.0),
        (3.0, 8.0, 4.0),
        (4.0, 8.0, 4.0),
        (6.0, 8.0, 4.0),
        (10.0, 8.0, 4.0),
        (10.0, 8.0, 10.0),
    ];
    for &(d, resolution, margin) in runs {
        let reference = reflection_anisotropy(RADIUS, d * RADIUS);
        for sources in [FarFieldSources::Centroid, FarFieldSources::Cells] {
            let t = std::time::Instant::now();
            let [a1, a2] = solve_pair(d * RADIUS, resolution, margin, sources)?;
            println!(
                "R = {d:>4}a  a/h = {resolution}  margin {margin:>4}a  {sources:?}: {a1:.4e} ({:+.1}%), \
                 {a2:.4e} ({:+.1}%) vs {reference:.4e}  [{:.1} s]",
                100.0 * (a1 / reference - 1.0),
                100.0 * (a2 / reference - 1.0),
                t.elapsed().as_secs_f64()
            );
        }
    }
    Ok(())
}
