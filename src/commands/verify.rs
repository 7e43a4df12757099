//! `plumefield verify [--quick]`: the analytic verification suite as a table; non-zero exit on any failure.

use crate::exit::SolverFailure;
use anyhow::Result;
use std::time::Instant;
use validation::cases::{run_all, Check, Tier};

pub fn execute(quick: bool) -> Result<()> {
    let tier = if quick { Tier::Quick } else { Tier::Full };
    let started = Instant::now();
    let checks = run_all(tier, &mut |name| eprintln!("verifying: {name} ...")).map_err(|e| {
        anyhow::Error::new(SolverFailure { message: format!("a verification case failed to solve: {e}") })
    })?;
    print!("{}", format_table(&checks));
    let failed = checks.iter().filter(|c| !c.passed).count();
    println!(
        "\n{} checks, {} passed, {} failed ({:.0} s)",
        checks.len(),
        checks.len() - failed,
        failed,
        started.elapsed().as_secs_f64()
    );
    if failed > 0 {
        return Err(anyhow::Error::new(SolverFailure {
            message: format!("{failed} verification checks failed"),
        }));
    }
    Ok(())
}

/// Aligned plain-text table: case, quantity, computed, reference, relative error, observed order, verdict, source.
pub fn format_table(checks: &[Check]) -> String {
    let header =
        ["case", "quantity", "computed", "reference", "rel. error", "tolerance", "order", "result", "source"];
    let rows: Vec<[String; 9]> = checks
        .iter()
        .map(|c| {
            [
                c.case.clone(),
                c.quantity.clone(),
                format!("{:.6e}", c.computed),
                format!("{:.6e}", c.reference),
                format!("{:.2e}", c.relative_error),
                format!("{:e}", c.tolerance),
                match (c.observed_order, c.minimum_order) {
                    (Some(o), Some(m)) => format!("{o:.2} (>= {m})"),
                    (Some(o), None) => format!("{o:.2}"),
                    _ => "-".into(),
                },
                if c.passed { "pass".into() } else { "FAIL".into() },
                c.source.clone(),
            ]
        })
        .collect();
    let mut widths = header.map(|h| h.chars().count());
    for row in &rows {
        for (w, cell) in widths.iter_mut().zip(row) {
            *w = (*w).max(cell.chars().count());
        }
    }
    let line = |cells: &[String]| {
        let mut s = String::new();
        for (i, (cell, w)) in cells.iter().zip(&widths).enumerate() {
            if i + 1 == cells.len() {
                s.push_str(cell);
            } else {
                s.push_str(&format!("{cell:<w$}  ", w = *w));
            }
        }
        s.trim_end().to_string() + "\n"
    };
    let mut out = line(&header.map(String::from));
    out.push_str(&line(&widths.map(|w| "-".repeat(w))));
    for row in &rows {
        out.push_str(&line(row));
    }
    out
}
