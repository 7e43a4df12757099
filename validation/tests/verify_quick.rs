//! The quick verification suite (`plumefield verify --quick`) as a test: every check must pass.

use validation::cases::{run_all, Tier};

#[test]
fn quick_verification_suite_passes() {
    run_and_assert(Tier::Quick);
}

/// The finer-grid suite (`plumefield verify`): minutes, so behind `--ignored`.
#[test]
#[ignore]
fn full_verification_suite_passes() {
    run_and_assert(Tier::Full);
}

fn run_and_assert(tier: Tier) {
    let checks = run_all(tier, &mut |name| eprintln!("verifying: {name}")).expect("verification cases solve");
    for c in &checks {
        eprintln!(
            "{:<5} {:<55} {:<40} computed {:>14.6e} reference {:>14.6e} rel.err {:.2e} (tol {:.0e}) order {:?}  [{}]",
            if c.passed { "pass" } else { "FAIL" },
            c.case,
            c.quantity,
            c.computed,
            c.reference,
            c.relative_error,
            c.tolerance,
            c.observed_order,
            c.source
        );
    }
    let failed: Vec<_> =
        checks.iter().filter(|c| !c.passed).map(|c| format!("{}: {}", c.case, c.quantity)).collect();
    assert!(failed.is_empty(), "failed checks: {failed:#?}");
}
