//! The study behind the tolerances of the Brinkman → Darcy limit check (`validation::cases::brinkman_darcy_limit`):
//! the along-stream velocity on the equatorial line of a sphere against the exact Brinkman and the Darcy flow,
//! at α = a/√K = 10 and 30 on 1 … 4 grid spacings per screening length. Minutes.
//!
//! `cargo run --release -p plumefield-bench --bin darcy-limit-profiles`

use validation::cases::brinkman_darcy_limit::equator_profile;

fn main() -> anyhow::Result<()> {
    for (alpha, s, reach) in
        [(10.0, 1.0, 2.0), (10.0, 2.0, 2.0), (10.0, 4.0, 2.0), (30.0, 1.0, 1.5), (30.0, 2.0, 1.5)]
    {
        let t = std::time::Instant::now();
        let (samples, iterations) = equator_profile(alpha, s, reach)?;
        println!(
            "alpha {alpha} sqrtK/h {s} reach {reach}: it {iterations} {:.1}s",
            t.elapsed().as_secs_f64()
        );
        for x in samples.iter().take(30) {
            println!(
                "  n {:6.3}  u {:8.5} brinkman {:8.5} darcy {:8.5}  dep {:8.5} exact dep {:8.5}",
                x.screening_lengths,
                x.computed,
                x.brinkman,
                x.darcy,
                x.computed_departure(),
                x.exact_departure()
            );
        }
    }
    Ok(())
}
