//! Running the cases of a sweep on this machine: `jobs` cases at a time, each on its own rayon pool of
//! `threads_per_job` threads (so the machine's cores are divided among the jobs, not oversubscribed), each into
//! `DIR/cases/<id>/` through the run engine (`crate::engine`), as `run` does. A case that fails is recorded and the others go
//! on. Resumable: cases already done (see `done_marker`) are skipped, and a case interrupted at any point is
//! started again from an empty folder.
//!
//! A case's outputs are written without `fsync` when the done marker can vouch for them ([`OutputSync`]):
//! each output costs two syncs otherwise, a noticeable share of a tiny case and, with several cases writing
//! at once, waits on the same disk. Cases are started longest first (by the forecast), so the sweep does not
//! end with one long case running alone.

use std::fs;
use std::panic::AssertUnwindSafe;
use std::path::Path;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Mutex;
use std::time::Instant;

use super::done_marker::{
    boot_id, case_state, from_another_boot, mark_outputs_durable, record_outputs, write_done, write_failed,
    CaseState, DoneMarker, FailureRecord, CASE_FILE,
};
use super::expand::Plan;
use crate::case::SolveMode;
use crate::engine::stages::{MeteredStage, StageMeter};
use crate::engine::transient::{self, TransientOptions};
use crate::engine::{solution_warnings, steady_case, write_outputs};
use crate::exit::{one_line, InputError, SolverFailure};
use crate::io::atomic::without_fsync;
use crate::io::write_atomic;
use numkit::meter::current_pool;
use solver::solve_case::solve_steady_case;

/// How the cases share the machine.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct LocalRunParams {
    /// Cases run at the same time.
    pub jobs: usize,
    /// Worker threads of each case.
    pub threads_per_job: usize,
}

impl LocalRunParams {
    /// Divide `threads` (the machine's cores by default) among at most `jobs` cases, never more jobs than
    /// `cases` to run: e.g. 8 threads, 3 jobs → 3 jobs of 2 threads; 2 threads, 4 jobs → 4 jobs of 1 thread.
    pub fn divide(threads: usize, jobs: usize, cases: usize) -> LocalRunParams {
        let jobs = jobs.clamp(1, cases.max(1));
        LocalRunParams { jobs, threads_per_job: (threads / jobs).max(1) }
    }
}

/// How the outputs of a case reach the disk.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OutputSync {
    /// Each output synced as it is written, like `run` does (a Slurm task: its outputs are collected later,
    /// maybe on another machine).
    EachFile,
    /// Outputs and done marker left to the page cache, nothing synced: the marker, written last, records this
    /// boot, so that a marker found after a crash is checked against the outputs' SHA-256s (see
    /// `done_marker`). Falls back to `EachFile` where the machine has no boot id.
    CheckedByMarker,
}

/// Order `indices` longest case first by `seconds` (ties keep their order), so that the cases left at the
/// end of a parallel run are short ones and no job runs a long case alone while the others idle.
pub fn longest_first(indices: &mut [usize], seconds: impl Fn(usize) -> f64) {
    indices.sort_by(|&a, &b| seconds(b).total_cmp(&seconds(a)));
}

/// Something that happened to one case, for the command's progress lines.
#[derive(Clone, Debug)]
pub enum CaseEvent {
    Started { index: usize },
    Finished { index: usize, elapsed_s: f64 },
    Failed { index: usize, error: String },
}

/// What a local run did.
#[derive(Clone, Debug, Default)]
pub struct RunSummary {
    /// Cases that were done before this run.
    pub already_done: usize,
    /// Cases this run finished.
    pub finished: usize,
    /// Cases that failed: (index, error sentence).
    pub failed: Vec<(usize, String)>,
}

/// The indices of `plan`'s cases that are not done in `dir` (failed ones included: they are retried).
pub fn cases_to_run(plan: &Plan, dir: &Path) -> Vec<usize> {
    cases_not_done(plan, dir, Markers::AsFound)
}

/// [`cases_to_run`], for a sweep that holds `DIR/sweep.lock`: also settles each done case whose marker came
/// from another boot (its outputs have just passed the SHA-256 check) with
/// [`mark_outputs_durable`](super::done_marker::mark_outputs_durable), so that later runs check sizes only.
/// Best effort: a case that cannot be settled is simply checked again next time.
pub fn cases_to_run_settling_markers(plan: &Plan, dir: &Path) -> Vec<usize> {
    cases_not_done(plan, dir, Markers::Settle)
}

/// What [`cases_not_done`] does with the done markers it accepts.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Markers {
    /// Leave them as they are.
    AsFound,
    /// Sync the outputs of a marker from another boot and rewrite it without the boot id.
    Settle,
}

fn cases_not_done(plan: &Plan, dir: &Path, markers: Markers) -> Vec<usize> {
    (0..plan.cases.len())
        .filter(|&i| {
            let case_dir = plan.case_dir(dir, i);
            match case_state(&case_dir, &plan.cases[i].sha256) {
                CaseState::Done(marker) => {
                    if markers == Markers::Settle && from_another_boot(&marker) {
                        let _ = mark_outputs_durable(&case_dir, &marker);
                    }
                    false
                }
                _ => true,
            }
        })
        .collect()
}

/// Run the cases `indices` of `plan` into `dir`, in that order, `params.jobs` at a time (their outputs
/// unsynced, checked through the done marker); `on_event` is called from the job threads as cases start,
/// finish or fail.
pub fn run_cases(
    plan: &Plan,
    dir: &Path,
    indices: &[usize],
    params: LocalRunParams,
    on_event: &(dyn Fn(CaseEvent) + Sync),
) -> RunSummary {
    let next = AtomicUsize::new(0);
    let summary =
        Mutex::new(RunSummary { already_done: plan.cases.len() - indices.len(), ..Default::default() });
    std::thread::scope(|scope| {
        for _ in 0..params.jobs.clamp(1, indices.len().max(1)) {
            scope.spawn(|| {
                let pool = rayon::ThreadPoolBuilder::new().num_threads(params.threads_per_job).build();
                loop {
                    let k = next.fetch_add(1, Ordering::SeqCst);
                    let Some(&index) = indices.get(k) else { break };
                    on_event(CaseEvent::Started { index });
                    let outcome = match &pool {
                        Ok(pool) => pool.install(|| {
                            run_case(plan, dir, index, params.threads_per_job, OutputSync::CheckedByMarker)
                        }),
                        Err(e) => {
                            Err(failure(plan, index, "io", format!("cannot start worker threads: {e}")))
                        }
                    };
                    let mut s = summary.lock().unwrap_or_else(|poisoned| poisoned.into_inner());
                    match outcome {
                        Ok(marker) => {
                            s.finished += 1;
                            on_event(CaseEvent::Finished { index, elapsed_s: marker.elapsed_s });
                        }
                        Err(record) => {
                            // Best effort: a failure that cannot even be recorded is still reported here.
                            let _ = write_failed(&plan.case_dir(dir, index), &record);
                            s.failed.push((index, record.error.clone()));
                            on_event(CaseEvent::Failed { index, error: record.error });
                        }
                    }
                }
            });
        }
    });
    let mut summary = summary.into_inner().unwrap_or_else(|poisoned| poisoned.into_inner());
    summary.failed.sort();
    summary
}

fn failure(plan: &Plan, index: usize, kind: &str, error: String) -> FailureRecord {
    let case = &plan.cases[index];
    FailureRecord { case_id: case.id.clone(), case_sha256: case.sha256.clone(), kind: kind.into(), error }
}

/// Run one case into `DIR/cases/<id>/` on the current rayon pool: empty the folder, write `case.toml`, solve,
/// write the outputs, then `done.json` last (synced as the outputs are: see [`OutputSync`]). A panic inside
/// the solver is caught and recorded as a failure.
pub fn run_case(
    plan: &Plan,
    dir: &Path,
    index: usize,
    threads: usize,
    sync: OutputSync,
) -> Result<DoneMarker, FailureRecord> {
    let started = Instant::now();
    let unsynced_boot_id = match sync {
        OutputSync::CheckedByMarker => boot_id(),
        OutputSync::EachFile => None,
    };
    let unsynced = unsynced_boot_id.is_some();
    let write = |f: &mut dyn FnMut() -> Result<(), FailureRecord>| {
        if unsynced {
            without_fsync(f)
        } else {
            f()
        }
    };
    let times_before = current_pool();
    let case_dir = plan.case_dir(dir, index);
    let io_failure = |what: &str, e: &dyn std::fmt::Display| {
        failure(plan, index, "io", format!("{what} {}: {e}", case_dir.display()))
    };
    // Whatever an interrupted attempt left (outputs, temporary files, markers) goes; the case starts clean.
    match fs::remove_dir_all(&case_dir) {
        Err(e) if e.kind() != std::io::ErrorKind::NotFound => return Err(io_failure("cannot empty", &e)),
        _ => {}
    }
    fs::create_dir_all(&case_dir).map_err(|e| io_failure("cannot create", &e))?;
    let planned = &plan.cases[index];
    write(&mut || {
        write_atomic(&case_dir.join(CASE_FILE), planned.text.as_bytes())
            .map_err(|e| io_failure("cannot write case.toml in", &e))
    })?;

    let case = plan
        .parse_case(index)
        .map_err(|e| failure(plan, index, "input", one_line(&anyhow::Error::new(e))))?;
    let caught = |panic: Box<dyn std::any::Any + Send>| {
        let message = panic
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| panic.downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "unknown panic".into());
        failure(plan, index, "panic", format!("the solver panicked: {message}"))
    };
    if case.solve.mode == SolveMode::Transient {
        // The `run` command's transient path, without its progress bar: several cases run at once.
        let options = TransientOptions { quiet: true, ..TransientOptions::default() };
        write(&mut || {
            std::panic::catch_unwind(AssertUnwindSafe(|| {
                transient::execute(&case, &case_dir, &case_dir, &options)
            }))
            .map_err(caught)?
            .map_err(|e| {
                let kind = if e.downcast_ref::<InputError>().is_some() { "input" } else { "solver" };
                failure(plan, index, kind, one_line(&e))
            })
        })?;
    } else {
        // Cases run side by side in this process: its memory peak is theirs together, so times only.
        let mut meter = StageMeter::times_only();
        let mut solved = std::panic::catch_unwind(AssertUnwindSafe(|| {
            solve_steady_case(&steady_case(&case), &mut |stage| meter.begin(MeteredStage::of(stage, true)))
        }))
        .map_err(caught)?
        .map_err(|e| {
            failure(
                plan,
                index,
                "solver",
                one_line(&anyhow::Error::new(SolverFailure { message: e.to_string() })),
            )
        })?;
        let warnings = solution_warnings(&case, &solved);
        write(&mut || {
            write_outputs(&case, &mut solved, &warnings, &case_dir, &mut meter)
                .map_err(|e| failure(plan, index, "io", one_line(&e)))
        })?;
    }
    let outputs = record_outputs(&case_dir).map_err(|e| io_failure("cannot list the outputs in", &e))?;
    let spent = times_before.zip(current_pool()).map(|(before, after)| before.until(&after));
    let marker = DoneMarker {
        case_id: planned.id.clone(),
        case_sha256: planned.sha256.clone(),
        elapsed_s: started.elapsed().as_secs_f64(),
        threads,
        cpu_s: spent.map(|t| t.cpu_s),
        runqueue_s: spent.map(|t| t.runqueue_s),
        unsynced_boot_id,
        outputs,
    };
    write(&mut || write_done(&case_dir, &marker).map_err(|e| io_failure("cannot write done.json in", &e)))?;
    Ok(marker)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn threads_are_divided_among_jobs() {
        assert_eq!(LocalRunParams::divide(8, 3, 10), LocalRunParams { jobs: 3, threads_per_job: 2 });
        assert_eq!(LocalRunParams::divide(2, 4, 10), LocalRunParams { jobs: 4, threads_per_job: 1 });
        assert_eq!(LocalRunParams::divide(8, 4, 2), LocalRunParams { jobs: 2, threads_per_job: 4 });
        assert_eq!(LocalRunParams::divide(2, 0, 5), LocalRunParams { jobs: 1, threads_per_job: 2 });
    }

    #[test]
    fn longest_cases_start_first_and_ties_keep_plan_order() {
        let seconds = [1.0, 5.0, 1.0, 3.0, 5.0];
        let mut indices = vec![0, 1, 2, 3, 4];
        longest_first(&mut indices, |i| seconds[i]);
        assert_eq!(indices, [1, 4, 3, 0, 2]);
    }
}
