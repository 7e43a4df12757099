//! What the binary does while the time loop runs: progress, one restart record per output time, and the
//! checkpoints of `--checkpoint-every`.
//!
//! A checkpoint must never lose an output time: the solver reports a step before it emits that step's output
//! (and counts it in `outputs_done` only after the emission). A checkpoint due on a step that also ends at an
//! output time is therefore held back and written right after that output time's record, with the output
//! counted; a checkpoint is never written for the run's last step (the run is complete then).

use std::path::Path;

use solver::solve_transient::{StepReport, TransientObserver, TransientOutput, TransientState};

use super::checkpoint_every::CheckpointEvery;
use super::progress::{human_time, TransientProgress};
use super::restart_files::{write_checkpoint, write_part, OutputPart};

pub struct RunObserver<'a> {
    pub out_dir: &'a Path,
    pub case_sha256: &'a str,
    pub progress: &'a TransientProgress,
    pub checkpoint_every: Option<CheckpointEvery>,
    /// (steps, time) of the last checkpoint, or of the start.
    pub last_checkpoint: (usize, f64),
    pub output_times: &'a [f64],
    pub end_time: f64,
    /// Time tolerance of the solver's own comparisons.
    pub eps: f64,
    /// Relative L2 distance below which the field counts as steady (for the message).
    pub steady_distance: f64,
    pub checkpoints_written: usize,
    /// Keep each output time's field (only when the run writes concentration snapshots).
    pub keep_fields: bool,
    pending: Option<TransientState>,
    steady_announced: bool,
    /// The last output time seen (the final state once the run ends).
    pub last_output: Option<OutputPart>,
    /// Time at which the field first came within `steady_distance` of the steady field.
    pub steady_at: Option<f64>,
    /// Wall seconds this process spent on the own fields of the self/neighbour split.
    pub split_seconds: f64,
}

impl<'a> RunObserver<'a> {
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        out_dir: &'a Path,
        case_sha256: &'a str,
        progress: &'a TransientProgress,
        checkpoint_every: Option<CheckpointEvery>,
        last_checkpoint: (usize, f64),
        output_times: &'a [f64],
        end_time: f64,
        eps: f64,
        steady_distance: f64,
    ) -> Self {
        RunObserver {
            out_dir,
            case_sha256,
            progress,
            checkpoint_every,
            last_checkpoint,
            output_times,
            end_time,
            eps,
            steady_distance,
            checkpoints_written: 0,
            keep_fields: true,
            pending: None,
            steady_announced: false,
            last_output: None,
            steady_at: None,
            split_seconds: 0.0,
        }
    }
}

impl TransientObserver for RunObserver<'_> {
    fn step(&mut self, state: &TransientState, report: &StepReport) -> Result<(), String> {
        self.progress.step(state.steps, report);
        self.split_seconds += report.split_seconds;
        if let Some(d) = report.distance_to_steady {
            if d <= self.steady_distance && !self.steady_announced {
                self.steady_announced = true;
                self.steady_at = Some(report.time);
                if report.held_for_readable > 0 {
                    self.progress.println(&format!(
                        "note: the field is within {:.0e} (relative L2) of the steady field at t = {}, but the run goes on: {} cell(s) still counting towards sensing.readable_error will reach it before solve.end_time",
                        self.steady_distance,
                        human_time(report.time),
                        report.held_for_readable
                    ));
                } else if !state.stopped_at_steady {
                    self.progress.println(&format!(
                        "note: the field is within {:.0e} (relative L2) of the steady field at t = {}; solve.stop_at_steady = true would stop here",
                        self.steady_distance,
                        human_time(report.time)
                    ));
                }
            }
        }
        let finished = state.stopped_at_steady || state.time >= self.end_time - self.eps;
        let Some(every) = self.checkpoint_every else { return Ok(()) };
        let (last_steps, last_time) = self.last_checkpoint;
        if finished || !every.due(state.steps, state.time, last_steps, last_time, self.eps) {
            return Ok(());
        }
        self.last_checkpoint = (state.steps, state.time);
        let at_output = self.output_times.iter().any(|&o| (o - state.time).abs() <= self.eps);
        if at_output {
            let mut held = state.clone();
            held.outputs_done += 1;
            self.pending = Some(held);
            return Ok(());
        }
        write_checkpoint(self.out_dir, self.case_sha256, state).map_err(|e| format!("{e:#}"))?;
        self.checkpoints_written += 1;
        Ok(())
    }

    fn output(&mut self, output: &TransientOutput<'_>) -> Result<(), String> {
        let part = OutputPart::from_output(output, self.keep_fields);
        write_part(self.out_dir, self.case_sha256, &part).map_err(|e| format!("{e:#}"))?;
        self.last_output = Some(part);
        if let Some(state) = self.pending.take() {
            write_checkpoint(self.out_dir, self.case_sha256, &state).map_err(|e| format!("{e:#}"))?;
            self.checkpoints_written += 1;
        }
        Ok(())
    }
}
