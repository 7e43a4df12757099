//! `plumefield sweep SWEEP`: expand a sweep file and run every case not yet done (locally, `--jobs` at a time),
//! then collect; `--plan` lists the cases with a memory/time forecast; `--task N` runs case N alone (what each
//! Slurm array task does); `--slurm DIR` writes (and with `--submit`, submits) the Slurm array.

use std::path::{Path, PathBuf};

use anyhow::{Context, Result};

use crate::exit::{one_line, InputError, SolverFailure};
use crate::forecast::{format_bytes, format_seconds, Forecast};
use crate::sweep::collect::finished_case_warnings;
use crate::sweep::done_marker::{case_state, write_failed, CaseState};
use crate::sweep::lock::{LockError, SweepLock};
use crate::sweep::memory_reuse;
use crate::sweep::plan_record::PlanRecord;
use crate::sweep::run_local::{
    cases_to_run, cases_to_run_settling_markers, longest_first, run_case, run_cases, CaseEvent,
    LocalRunParams, OutputSync, RunSummary,
};
use crate::sweep::slurm::{self, SlurmOptions, SlurmParams};
use crate::sweep::{Plan, SweepError, SweepFile};

/// Command-line options of `plumefield sweep`.
#[derive(Clone, Debug, Default)]
pub struct SweepOptions {
    pub sweep: PathBuf,
    /// `-o DIR`.
    pub output: Option<PathBuf>,
    /// Cases at once (local runs).
    pub jobs: Option<usize>,
    /// Threads: in all for a local run, per case for `--task` and `--slurm`.
    pub threads: Option<usize>,
    /// `--slurm DIR`: write the array scripts for the sweep folder DIR.
    pub slurm: Option<PathBuf>,
    /// Submit the scripts written by `--slurm` with sbatch.
    pub submit: bool,
    /// `--max-running N`: array concurrency limit.
    pub max_running: Option<usize>,
    /// `--partition NAME`.
    pub partition: Option<String>,
    /// `--account NAME`.
    pub account: Option<String>,
    /// `--qos NAME`.
    pub qos: Option<String>,
    /// `--setup FILE`: shell lines each Slurm task runs first.
    pub setup: Option<PathBuf>,
    /// `--node-memory`: a compute node's memory, bytes, for the warnings of `--plan` and `--slurm`.
    pub node_memory: Option<f64>,
    /// `--task N`: run case N only.
    pub task: Option<usize>,
    /// `--plan`: list the cases, run nothing.
    pub plan: bool,
    /// `--auto-rounds` (a crossing search on Slurm): the job after each round submits the next round.
    pub auto_rounds: bool,
}

/// Some cases of a local sweep failed; the exit code is 100 + their number (at most 255).
#[derive(Debug, thiserror::Error)]
#[error("{failed} of {total} cases failed; their errors are in {dir}/cases/<id>/failed.json and the exit code is 100 + the number failed")]
pub struct CasesFailed {
    pub failed: usize,
    pub total: usize,
    pub dir: String,
}

impl CasesFailed {
    /// `100 + failed`, capped at 255.
    pub fn exit_code(&self) -> u8 {
        (100 + self.failed.min(155)) as u8
    }
}

/// A sweep mistake as bad input (exit code 2), keeping the case error in the chain when there is one.
pub(super) fn input(error: SweepError) -> anyhow::Error {
    anyhow::Error::new(InputError(one_line(&anyhow::Error::new(error))))
}

/// The sweep folder: `--slurm DIR`, `-o DIR`, the sweep file's `output`, or `out/<sweep file stem>`.
fn sweep_dir(options: &SweepOptions, sweep: &SweepFile) -> Result<PathBuf> {
    if let (Some(s), Some(o)) = (&options.slurm, &options.output) {
        if s != o {
            return Err(InputError(format!(
                "--slurm {} and -o {} name different sweep folders; give one",
                s.display(),
                o.display()
            ))
            .into());
        }
    }
    Ok(options
        .slurm
        .clone()
        .or_else(|| options.output.clone())
        .or_else(|| sweep.output.clone())
        .unwrap_or_else(|| {
            let stem = sweep
                .path
                .file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_else(|| "sweep".into());
            Path::new("out").join(stem)
        }))
}

fn cores() -> usize {
    std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1)
}

/// A case that passed validation, with what `--plan` shows about it.
pub(super) struct Checked {
    index: usize,
    forecast: Forecast,
    shape: [usize; 3],
    cells: usize,
    /// What the case is warned about before it is solved.
    warnings: Vec<String>,
}

/// Validate the cases `indices` and forecast each (errors name the axis; exit code 2). Cases are parsed on
/// all cores (a sweep's start-up is serial time before its first case); the first error in plan order is
/// reported.
pub(super) fn validate(plan: &Plan, indices: &[usize]) -> Result<Vec<Checked>> {
    use rayon::prelude::*;
    let checked: Vec<Result<Checked>> = indices
        .par_iter()
        .map(|&index| {
            let case = plan.parse_case(index).map_err(input)?;
            Ok(Checked {
                index,
                forecast: Forecast::of(&case),
                shape: case.grid.shape,
                cells: case.layout.cells.len(),
                warnings: crate::engine::case_warnings(&case),
            })
        })
        .collect();
    checked.into_iter().collect()
}

pub fn execute(options: &SweepOptions) -> Result<()> {
    // Slurm tasks run on other machines, with up to a node's cores each.
    const MAX_TASK_THREADS: usize = 1024;
    match (options.threads, options.slurm.is_some()) {
        (Some(n), true) if n == 0 || n > MAX_TASK_THREADS => {
            return Err(InputError(format!(
                "--threads {n} with --slurm asks for {n} CPUs per task; give 1 to {MAX_TASK_THREADS}"
            ))
            .into())
        }
        (Some(n), false) => super::check_thread_count("--threads", n)?,
        _ => {}
    }
    if let Some(jobs) = options.jobs {
        super::check_thread_count("--jobs", jobs)?;
    }
    let sweep = SweepFile::load(&options.sweep).map_err(input)?;
    let plan = Plan::expand(sweep).map_err(input)?;
    let dir = sweep_dir(options, &plan.sweep)?;
    if plan.sweep.find.is_some() {
        return super::sweep_find::execute(&plan, &dir, options);
    }
    if options.plan {
        return print_plan(&plan, &dir, options.node_memory);
    }
    if let Some(task) = options.task {
        return run_task(&plan, &dir, task, options.threads);
    }
    if options.slurm.is_some() {
        return write_slurm(&plan, &dir, options);
    }
    run_locally(&plan, &dir, options)
}

/// A warning on stderr when the largest of `checked` is forecast to need more than a compute node has.
pub(super) fn warn_about_node_memory(
    plan: &Plan,
    checked: &[Checked],
    threads: usize,
    node_memory: Option<f64>,
) {
    let Some(budget) = super::memory_budget::node_budget(node_memory) else { return };
    let largest = checked.iter().max_by(|a, b| a.forecast.memory_bytes.total_cmp(&b.forecast.memory_bytes));
    if let Some(c) = largest {
        let needed = c.forecast.memory_bytes_on(threads);
        if needed > budget.bytes {
            eprintln!(
                "warning: {} needs about {}, more than the {} of {}; such cases would be refused",
                plan.cases[c.index].id,
                format_bytes(needed),
                format_bytes(budget.bytes),
                budget.source
            );
        }
    }
}

fn print_plan(plan: &Plan, dir: &Path, node_memory: Option<f64>) -> Result<()> {
    let all: Vec<usize> = (0..plan.cases.len()).collect();
    let checked = validate(plan, &all)?;
    warn_about_node_memory(plan, &checked, 1, node_memory);
    println!(
        "sweep {} → {} ({} cases, base {})",
        plan.sweep.path.display(),
        dir.display(),
        plan.cases.len(),
        plan.sweep.base_path.display()
    );
    println!(
        "{:<11} {:>6} {:>14} {:>6} {:>9} {:>9}  parameters (time: on one thread)",
        "id", "status", "grid", "cells", "memory", "time"
    );
    let (mut memory, mut seconds) = (0.0_f64, 0.0);
    for Checked { index: i, forecast, shape, cells, warnings } in checked {
        let status = match case_state(&plan.case_dir(dir, i), &plan.cases[i].sha256) {
            CaseState::Done(_) => "done",
            CaseState::Failed(_) => "failed",
            CaseState::NotDone { .. } => "to run",
        };
        memory = memory.max(forecast.memory_bytes);
        seconds += forecast.seconds_one_thread;
        println!(
            "{:<11} {:>6} {:>14} {:>6} {:>9} {:>9}  {}",
            plan.cases[i].id,
            status,
            format!("{}x{}x{}", shape[0], shape[1], shape[2]),
            cells,
            format_bytes(forecast.memory_bytes),
            format_seconds(forecast.seconds_one_thread),
            plan.describe(i)
        );
        for warning in warnings {
            println!("{:<11} warning: {warning}", "");
        }
    }
    println!(
        "largest case needs about {}; all cases about {} of one core (forecast from the grid size)",
        format_bytes(memory),
        format_seconds(seconds)
    );
    Ok(())
}

pub(super) fn write_plan_record(plan: &Plan, dir: &Path) -> Result<()> {
    PlanRecord::of(plan)
        .write(dir)
        .with_context(|| format!("cannot write the sweep plan into {}", dir.display()))
}

pub(super) fn run_task(plan: &Plan, dir: &Path, task: usize, threads: Option<usize>) -> Result<()> {
    let Some(planned) = plan.cases.get(task) else {
        return Err(InputError(format!(
            "--task {task} does not exist: the sweep has {} cases (0 to {})",
            plan.cases.len(),
            plan.cases.len().saturating_sub(1)
        ))
        .into());
    };
    write_plan_record(plan, dir)?;
    let case_dir = plan.case_dir(dir, task);
    if let CaseState::Done(_) = case_state(&case_dir, &planned.sha256) {
        eprintln!("{} is already done", planned.id);
        return Ok(());
    }
    let threads = threads.unwrap_or_else(cores);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .map_err(|e| anyhow::anyhow!("cannot start {threads} worker threads: {e}"))?;
    eprintln!("{}: {}", planned.id, plan.describe(task));
    // Synced file by file: the task's outputs are collected later, possibly on another node.
    match pool.install(|| run_case(plan, dir, task, threads, OutputSync::EachFile)) {
        Ok(marker) => {
            eprintln!("{} done in {:.2} s", planned.id, marker.elapsed_s);
            for warning in finished_case_warnings(&case_dir) {
                eprintln!("{} warning: {warning}", planned.id);
            }
            Ok(())
        }
        Err(record) => {
            write_failed(&case_dir, &record)
                .with_context(|| format!("cannot record the failure in {}", case_dir.display()))?;
            let message = format!("{} failed: {}", planned.id, record.error);
            if record.kind == "input" {
                Err(InputError(message).into())
            } else {
                Err(SolverFailure { message }.into())
            }
        }
    }
}

/// The Slurm options of this command line, each one not given taken from the earlier writing for `dir`.
pub(super) fn slurm_options(options: &SweepOptions, dir: &Path) -> Result<SlurmOptions> {
    let setup =
        match &options.setup {
            None => None,
            Some(path) => {
                let bytes = crate::case::bounded_read::read_bounded(path, 64 << 10, "set-up file")
                    .map_err(|e| InputError(format!("--setup {}: cannot read it: {e}", path.display())))?;
                Some(String::from_utf8(bytes).map_err(|_| {
                    InputError(format!("--setup {}: the file is not UTF-8 text", path.display()))
                })?)
            }
        };
    let given = SlurmOptions {
        threads: options.threads,
        max_running: options.max_running,
        partition: options.partition.clone(),
        account: options.account.clone(),
        qos: options.qos.clone(),
        setup,
    };
    Ok(given.or(SlurmOptions::remembered(dir)))
}

fn write_slurm(plan: &Plan, dir: &Path, options: &SweepOptions) -> Result<()> {
    let slurm_options = slurm_options(options, dir)?;
    let checked = validate(plan, &cases_to_run(plan, dir))?;
    warn_about_node_memory(plan, &checked, slurm_options.threads.unwrap_or(1), options.node_memory);
    std::fs::create_dir_all(dir)
        .with_context(|| format!("cannot create the sweep folder {}", dir.display()))?;
    let dir = std::fs::canonicalize(dir).with_context(|| format!("cannot resolve {}", dir.display()))?;
    let _lock = lock(&dir, "writing Slurm scripts")?;
    let missing = cases_to_run(plan, &dir);
    write_plan_record(plan, &dir)?;
    if missing.is_empty() {
        println!("all {} cases are done; nothing to submit. Collecting.", plan.cases.len());
        return super::collect::execute(&dir);
    }
    submit_slurm(plan, &dir, options, &slurm_options, &checked, &missing, "collect .")
}

/// Write (and with `--submit`, submit) the array of the cases `missing` of `plan` (validated in `checked`)
/// for the sweep folder `dir` (absolute, locked), the job after it running `plumefield <after>`.
pub(super) fn submit_slurm(
    plan: &Plan,
    dir: &Path,
    options: &SweepOptions,
    slurm_options: &SlurmOptions,
    checked: &[Checked],
    missing: &[usize],
    after: &str,
) -> Result<()> {
    let largest = checked
        .iter()
        .map(|c| c.forecast)
        .max_by(|a, b| {
            a.memory_bytes
                .total_cmp(&b.memory_bytes)
                .then(a.seconds_one_thread.total_cmp(&b.seconds_one_thread))
        })
        .unwrap_or_else(|| Forecast::for_grid(0, 0));
    let sweep_file = std::fs::canonicalize(&plan.sweep.path)
        .with_context(|| format!("cannot resolve {}", plan.sweep.path.display()))?;
    let exe = std::env::current_exe().context("cannot find the plumefield executable for the job script")?;
    let (max_array_size, size_source) = slurm::max_array_size().map_err(InputError)?;
    slurm_options
        .remember(dir)
        .with_context(|| format!("cannot keep the Slurm options in {}", dir.display()))?;
    let params = SlurmParams {
        cpus_per_task: slurm_options.threads.unwrap_or(1),
        max_running: slurm_options.max_running,
        partition: slurm_options.partition.clone(),
        max_array_size,
        account: slurm_options.account.clone(),
        qos: slurm_options.qos.clone(),
        setup: slurm_options.setup.clone(),
    };
    let stem = plan
        .sweep
        .path
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "sweep".into());
    let job_name: String =
        format!("pf-{stem}").chars().filter(|c| c.is_ascii_alphanumeric() || "-_.".contains(*c)).collect();
    let scripts =
        slurm::write_scripts_then(dir, &sweep_file, &exe, missing, &largest, &params, &job_name, after)
            .with_context(|| format!("cannot write the Slurm scripts into {}", dir.display()))?;
    let arrays: Vec<String> = scripts
        .chunks
        .iter()
        .zip(&scripts.array_scripts)
        .map(|(chunk, script)| {
            let offset =
                if chunk.offset > 0 { format!(", case {} + task id", chunk.offset) } else { String::new() };
            format!(
                "{} (--array={}{offset})",
                script.display(),
                slurm::array_spec(&chunk.ids, slurm_options.max_running)
            )
        })
        .collect();
    if scripts.chunks.len() > 1 {
        println!(
            "the {} tasks span cases {} to {}, more than MaxArraySize = {max_array_size} ({size_source}) allows in \
             one array: {} array jobs{}",
            missing.len(),
            missing.first().copied().unwrap_or(0),
            missing.last().copied().unwrap_or(0),
            scripts.chunks.len(),
            if slurm_options.max_running.is_some() { ", each after the previous one (--max-running)" } else { "" }
        );
    }
    println!(
        "wrote {} ({} of {} cases, --mem={}M, --time={} per task) and {}",
        arrays.join(", "),
        missing.len(),
        plan.cases.len(),
        scripts.mem_mb,
        slurm::slurm_time(scripts.time_s as f64),
        scripts.collect_script.display()
    );
    if options.submit {
        let submitted =
            slurm::submit(&scripts, slurm::ArrayOrder::for_max_running(slurm_options.max_running))
                .map_err(|e| anyhow::anyhow!("{e}"))?;
        println!(
            "submitted array job{} {} and collect job {}",
            if submitted.array_jobs.len() == 1 { "" } else { "s" },
            submitted.array_jobs.join(","),
            submitted.collect_job
        );
    } else {
        println!("submit with: sh {}", slurm::shell_quote(&scripts.submit_script.display().to_string()));
    }
    Ok(())
}

/// Take the sweep folder's lock (exit code 2 when another sweep holds it).
pub(super) fn lock(dir: &Path, purpose: &str) -> Result<SweepLock> {
    SweepLock::acquire(dir, purpose, &mut |message| eprintln!("sweep: {message}")).map_err(|e| match e {
        LockError::Io { .. } => anyhow::Error::new(e),
        refused => anyhow::Error::new(InputError(refused.to_string())),
    })
}

fn run_locally(plan: &Plan, dir: &Path, options: &SweepOptions) -> Result<()> {
    // Many cases in one process: freed arrays are kept for the next case instead of being unmapped.
    memory_reuse::keep_freed_memory();
    // What every case needs once per process — the git revision stamped into the outputs (a `git` child
    // process) and the HDF5 library's set-up — is done beside the case checks, not inside the first cases,
    // whose jobs would otherwise wait for it one after the other.
    let warm_up = std::thread::spawn(|| {
        crate::io::git_revision();
        hdf5::sync::sync(|| ());
    });
    let checked = validate(plan, &cases_to_run(plan, dir))?;
    std::fs::create_dir_all(dir)
        .with_context(|| format!("cannot create the sweep folder {}", dir.display()))?;
    let _lock = lock(dir, "a local sweep")?;
    // Under the lock: what is done now (another sweep may have finished cases since the check above).
    let todo = cases_to_run_settling_markers(plan, dir);
    write_plan_record(plan, dir)?;
    // Nothing to report: a panic in the warm-up would recur, and be recorded, in the first case.
    let _ = warm_up.join();
    let summary = run_batch(plan, dir, todo, &checked, options, "sweep")?;
    super::collect::execute(dir)?;
    if summary.failed.is_empty() {
        Ok(())
    } else {
        Err(CasesFailed {
            failed: summary.failed.len(),
            total: plan.cases.len(),
            dir: dir.display().to_string(),
        }
        .into())
    }
}

/// Run the cases `todo` of `plan` (validated in `checked`, in index order) into `dir` on this machine, longest
/// first, `--jobs` at a time within the memory budget, with a progress line per case; `label` starts the
/// lines. The caller holds the sweep folder's lock.
pub(super) fn run_batch(
    plan: &Plan,
    dir: &Path,
    mut todo: Vec<usize>,
    checked: &[Checked],
    options: &SweepOptions,
    label: &str,
) -> Result<RunSummary> {
    // `checked` is in index order (from `cases_to_run`).
    let forecast_s = |index: usize| {
        checked
            .binary_search_by_key(&index, |c| c.index)
            .map_or(0.0, |k| checked[k].forecast.seconds_one_thread)
    };
    longest_first(&mut todo, forecast_s);
    let threads = options.threads.unwrap_or_else(cores);
    let largest = checked.iter().map(|c| c.forecast.memory_bytes).fold(0.0, f64::max);
    if let Some(budget) = super::memory_budget::run_budget(None) {
        if largest > budget.bytes {
            return Err(InputError(format!(
                "the largest case needs about {}, more than the {} of {}; use a coarser grid in the base case \
                 or the axes, or run the sweep on a cluster (--slurm)",
                format_bytes(largest),
                format_bytes(budget.bytes),
                budget.source
            ))
            .into());
        }
    }
    let jobs = options.jobs.unwrap_or_else(|| memory_limited_jobs(threads, largest));
    let params = LocalRunParams::divide(threads, jobs, todo.len());
    eprintln!(
        "{label}: {} cases, {} already done, {} to run ({} at a time, {} thread{} each) into {}",
        plan.cases.len(),
        plan.cases.len() - todo.len(),
        todo.len(),
        params.jobs,
        params.threads_per_job,
        if params.threads_per_job == 1 { "" } else { "s" },
        dir.display()
    );
    let counter = std::sync::atomic::AtomicUsize::new(0);
    let total = todo.len();
    let summary = run_cases(plan, dir, &todo, params, &|event| match event {
        CaseEvent::Started { .. } => {}
        CaseEvent::Finished { index, elapsed_s } => {
            let k = counter.fetch_add(1, std::sync::atomic::Ordering::SeqCst) + 1;
            eprintln!(
                "sweep ▸ {k} of {total} · {} done in {elapsed_s:.2} s · {}",
                plan.cases[index].id,
                plan.describe(index)
            );
            for warning in finished_case_warnings(&plan.case_dir(dir, index)) {
                eprintln!("sweep ▸ {} warning: {warning}", plan.cases[index].id);
            }
        }
        CaseEvent::Failed { index, error } => {
            let k = counter.fetch_add(1, std::sync::atomic::Ordering::SeqCst) + 1;
            eprintln!("sweep ▸ {k} of {total} · {} FAILED: {error}", plan.cases[index].id);
        }
    });
    Ok(summary)
}

/// One job per core, but no more than 80% of the available memory holds (each job needs `case_bytes`).
fn memory_limited_jobs(threads: usize, case_bytes: f64) -> usize {
    match super::memory_budget::available_bytes() {
        Some(bytes) if case_bytes > 0.0 => threads.min((0.8 * bytes / case_bytes).floor().max(1.0) as usize),
        _ => threads,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn failure_exit_codes() {
        let f = |n| CasesFailed { failed: n, total: 300, dir: "d".into() }.exit_code();
        assert_eq!((f(1), f(7), f(155), f(200)), (101, 107, 255, 255));
    }
}
