//! The convergence study behind the time-step choice of `run`: an isolated sphere switched on at t = 0
//! (a/h = 6) with 4 … 128 BDF2 steps per diffusion time a²/D; surface concentrations at 0.25, 0.5, 1 and 2 a²/D,
//! their differences between successive step counts and the observed orders. About half a minute.
//!
//! `cargo run --release -p plumefield-bench --bin transient-time-order`

use validation::cases::transient_sphere::sphere_series;

fn main() -> anyhow::Result<()> {
    let outputs = [0.25, 0.5, 1.0, 2.0];
    let mut all = Vec::new();
    for steps_per_unit in [4.0, 8.0, 16.0, 32.0, 64.0, 128.0] {
        let r = sphere_series(6.0, 3.0, steps_per_unit, &outputs, 0.0)?;
        println!(
            "steps/unit {steps_per_unit}: {:?} balance {:.2e} iterations {}",
            r.surface, r.worst_balance, r.iterations
        );
        all.push(r.surface);
    }
    for (k, t) in outputs.iter().enumerate() {
        let differences: Vec<f64> = all.windows(2).map(|w| w[0][k] - w[1][k]).collect();
        let orders: Vec<f64> =
            differences.windows(2).map(|w| numkit::observed_order(w[0].abs(), w[1].abs(), 2.0)).collect();
        println!("t = {t}: differences {differences:?} orders {orders:?}");
    }
    Ok(())
}
