//! `plumefield sweep SWEEP` for a sweep file with a `[find]` table: the crossing search. Locally it runs round
//! after round (`--jobs` at a time) until every combination of the other axes has its result, then collects
//! and writes `DIR/crossing.csv` and `DIR/crossing.png`; `--plan` lists the cases decided so far and the next
//! round's; `--task N` runs case N of the plan record (a Slurm array task); `--slurm DIR` writes the current
//! round as a job array, followed by a job that, with `--auto-rounds`, decides and submits the next round
//! (clusters whose compute nodes may submit jobs) or else collects (the user runs `--slurm DIR --submit` once
//! per round). `DIR/slurm/round.json` remembers the cases last submitted, so that a round whose tasks keep
//! dying is not submitted again and again by the job after it.

use std::collections::HashSet;
use std::path::Path;

use anyhow::{Context, Result};

use super::sweep::{lock, validate, write_plan_record, CasesFailed, SweepOptions};
use crate::io::write_atomic;
use crate::sweep::crossing_rounds::{advance, Progress};
use crate::sweep::crossing_table::{CrossingRow, CROSSING_FILE};
use crate::sweep::done_marker::CaseState;
use crate::sweep::memory_reuse;
use crate::sweep::plan_record::PlanRecord;
use crate::sweep::Plan;

pub fn execute(plan: &Plan, dir: &Path, options: &SweepOptions) -> Result<()> {
    if options.plan {
        return print_plan(plan, dir);
    }
    if let Some(task) = options.task {
        return run_task(plan, dir, task, options);
    }
    if options.slurm.is_some() {
        return write_slurm(plan, dir, options);
    }
    find_locally(plan, dir, options)
}

/// A finished case counts when done, or when it failed in this process (a failure found from an earlier
/// process is retried once, as a plain sweep retries it).
fn find_locally(plan: &Plan, dir: &Path, options: &SweepOptions) -> Result<()> {
    memory_reuse::keep_freed_memory();
    plan.parse_base().map_err(super::sweep::input)?;
    std::fs::create_dir_all(dir)
        .with_context(|| format!("cannot create the sweep folder {}", dir.display()))?;
    let _lock = lock(dir, "a crossing search")?;
    let mut attempted: HashSet<String> = HashSet::new();
    let mut failed = 0;
    loop {
        let progress = advance(plan, dir, &|id: &str, state: &CaseState| match state {
            CaseState::Done(_) => true,
            CaseState::Failed(_) => attempted.contains(id),
            CaseState::NotDone { .. } => false,
        })?;
        write_plan_record(&progress.plan, dir)?;
        if progress.finished() {
            let crossing = super::collect::execute_with_crossing(dir)?;
            report(&progress, dir, crossing);
            return if failed == 0 {
                Ok(())
            } else {
                Err(CasesFailed { failed, total: progress.plan.cases.len(), dir: dir.display().to_string() }
                    .into())
            };
        }
        let checked = validate(&progress.plan, &progress.to_run)?;
        let label = format!("find, round {}", progress.rounds);
        let summary =
            super::sweep::run_batch(&progress.plan, dir, progress.to_run.clone(), &checked, options, &label)?;
        failed += summary.failed.len();
        attempted.extend(progress.to_run.iter().map(|&i| progress.plan.cases[i].id.clone()));
    }
}

/// One line per combination: its result.
fn report(progress: &Progress, dir: &Path, crossing: Option<(Vec<String>, Vec<CrossingRow>)>) {
    let (header, rows) = crossing.unwrap_or_default();
    for row in &rows {
        let others: Vec<String> = header
            .iter()
            .zip(&row.values)
            .map(|(h, (si, text))| format!("{h} = {}", si.map_or(text.clone(), |v| format!("{v:e}"))))
            .collect();
        let seeds = row.seeds_needed.map(|n| format!(" (about {n} seeds needed)")).unwrap_or_default();
        eprintln!(
            "find ▸ {}{}crossing {:e} in [{:e}, {:e}], {} cases: {}{seeds}",
            others.join(", "),
            if others.is_empty() { "" } else { ": " },
            row.crossing,
            row.low,
            row.high,
            row.cases,
            row.status
        );
    }
    eprintln!(
        "find: {} rounds, {} cases; crossing in {}",
        progress.rounds,
        progress.plan.cases.len(),
        dir.join(CROSSING_FILE).display()
    );
}

fn print_plan(plan: &Plan, dir: &Path) -> Result<()> {
    let progress =
        advance(plan, dir, &|_, state| matches!(state, CaseState::Done(_) | CaseState::Failed(_)))?;
    let all: Vec<usize> = (0..progress.plan.cases.len()).collect();
    validate(&progress.plan, &all)?;
    println!(
        "crossing search {} → {} ({} cases in {} rounds so far, {} of them to run next)",
        plan.sweep.path.display(),
        dir.display(),
        progress.plan.cases.len(),
        progress.rounds,
        progress.to_run.len()
    );
    for (i, case) in progress.plan.cases.iter().enumerate() {
        let status = if progress.to_run.contains(&i) { "to run" } else { "done" };
        println!("{:<17} {:>6}  {}", case.id, status, progress.plan.describe(i));
    }
    Ok(())
}

/// Run case `task` of the plan record in `dir` (written by `--slurm` for the current round).
fn run_task(plan: &Plan, dir: &Path, task: usize, options: &SweepOptions) -> Result<()> {
    let record = PlanRecord::read(dir).map_err(|m| anyhow::Error::new(crate::exit::InputError(m)))?;
    let progress =
        advance(plan, dir, &|_, state| matches!(state, CaseState::Done(_) | CaseState::Failed(_)))?;
    let Some(wanted) = record.cases.get(task) else {
        return Err(crate::exit::InputError(format!(
            "--task {task} does not exist: the plan in {} has {} cases",
            dir.display(),
            record.cases.len()
        ))
        .into());
    };
    let Some(index) = progress.plan.cases.iter().position(|c| c.id == wanted.id && c.sha256 == wanted.sha256)
    else {
        return Err(crate::exit::InputError(format!(
            "--task {task}: case {} of the plan in {} is not among the cases this sweep file asks for now; \
             write the scripts again with --slurm",
            wanted.id,
            dir.display()
        ))
        .into());
    };
    super::sweep::run_task(&progress.plan, dir, index, options.threads)
}

/// The cases submitted last, by id: `DIR/slurm/round.json`.
const ROUND_FILE: &str = "round.json";

fn write_slurm(plan: &Plan, dir: &Path, options: &SweepOptions) -> Result<()> {
    let slurm_options = super::sweep::slurm_options(options, dir)?;
    plan.parse_base().map_err(super::sweep::input)?;
    std::fs::create_dir_all(dir)
        .with_context(|| format!("cannot create the sweep folder {}", dir.display()))?;
    let dir = std::fs::canonicalize(dir).with_context(|| format!("cannot resolve {}", dir.display()))?;
    let _lock = lock(&dir, "writing Slurm scripts")?;
    // On a cluster a failed case is not retried by the search: the next round needs its (missing) value.
    let progress =
        advance(plan, &dir, &|_, state| matches!(state, CaseState::Done(_) | CaseState::Failed(_)))?;
    write_plan_record(&progress.plan, &dir)?;
    if progress.finished() {
        println!("the search is over after {} rounds; nothing to submit. Collecting.", progress.rounds);
        let crossing = super::collect::execute_with_crossing(&dir)?;
        report(&progress, &dir, crossing);
        return Ok(());
    }
    let ids: Vec<String> = progress.to_run.iter().map(|&i| progress.plan.cases[i].id.clone()).collect();
    let round_file = dir.join(crate::sweep::slurm::SLURM_DIR).join(ROUND_FILE);
    let previous: Option<Vec<String>> =
        std::fs::read(&round_file).ok().and_then(|bytes| serde_json::from_slice(&bytes).ok());
    if options.auto_rounds && previous.as_ref() == Some(&ids) {
        return Err(crate::exit::InputError(format!(
            "round {}: its {} cases were submitted and did not finish (see {}/slurm/logs); not submitting them \
             again automatically. Fix the cause, then run this command without --auto-rounds, or with it to go on",
            progress.rounds,
            ids.len(),
            dir.display()
        ))
        .into());
    }
    let checked = validate(&progress.plan, &progress.to_run)?;
    super::sweep::warn_about_node_memory(
        &progress.plan,
        &checked,
        slurm_options.threads.unwrap_or(1),
        options.node_memory,
    );
    let after = if options.auto_rounds && options.submit {
        "sweep {sweep} --slurm . --submit --auto-rounds".to_string()
    } else {
        "collect .".to_string()
    };
    println!(
        "round {}: {} cases to run ({} cases in the plan)",
        progress.rounds,
        progress.to_run.len(),
        progress.plan.cases.len()
    );
    super::sweep::submit_slurm(
        &progress.plan,
        &dir,
        options,
        &slurm_options,
        &checked,
        &progress.to_run,
        &after,
    )?;
    if options.submit {
        let text = serde_json::to_vec_pretty(&ids).map_err(std::io::Error::other)?;
        write_atomic(&round_file, &text).with_context(|| format!("cannot write {}", round_file.display()))?;
    }
    Ok(())
}
