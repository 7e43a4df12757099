//! Progress of a transient run on stderr: simulated time against the end time, step count, and the last
//! step's residual — its molecule-balance imbalance, which is the linear residual summed over the grid
//! (`solver::transport::transient::balance`) — plus the distance to the steady field, in the house layout
//! `plumefield ▸ ███░░ 40% · t = … · 12s`. indicatif hides the bar when stderr is not a terminal; messages are
//! printed either way.

use indicatif::{ProgressBar, ProgressStyle};
use solver::solve_case::Stage;
use solver::solve_transient::StepReport;

/// Resolution of the bar (positions per run).
const TICKS: u64 = 1000;

pub struct TransientProgress {
    bar: ProgressBar,
    quiet: bool,
    start: f64,
    end: f64,
}

/// `1.5 h`, `12 min`, `40 s`: the largest unit that keeps the number at least 1.
pub fn human_time(seconds: f64) -> String {
    if seconds.abs() >= 3600.0 {
        format!("{:.3} h", seconds / 3600.0)
    } else if seconds.abs() >= 60.0 {
        format!("{:.2} min", seconds / 60.0)
    } else {
        format!("{seconds:.3} s")
    }
}

impl TransientProgress {
    /// `quiet`: no bar and no messages (the run's outputs and summary still say everything).
    pub fn new(start: f64, end: f64, quiet: bool) -> Self {
        if quiet {
            return TransientProgress { bar: ProgressBar::hidden(), quiet, start, end };
        }
        let bar = ProgressBar::new(TICKS);
        bar.set_style(
            ProgressStyle::with_template("plumefield ▸ {bar:24} {percent:>3}% · {msg} · {elapsed}")
                .map(|style| style.progress_chars("█▌·"))
                .unwrap_or_else(|_| ProgressStyle::default_bar()),
        );
        bar.enable_steady_tick(std::time::Duration::from_millis(200));
        TransientProgress { bar, quiet, start, end }
    }

    pub fn stage(&self, stage: Stage) {
        self.bar.set_message(match stage {
            Stage::Geometry => "embedded-boundary geometry",
            Stage::Flow => "flow of every phase",
            Stage::Transport => "steady reference",
            Stage::TimeLoop => "time steps",
            Stage::Sensing => "per-cell sensing",
        });
    }

    pub fn step(&self, steps: usize, report: &StepReport) {
        let fraction = ((report.time - self.start) / (self.end - self.start)).clamp(0.0, 1.0);
        self.bar.set_position((fraction * TICKS as f64).round() as u64);
        let distance =
            report.distance_to_steady.map(|d| format!(", {d:.1e} from steady")).unwrap_or_default();
        self.bar.set_message(format!(
            "t = {} / {}, step {steps} (Δt {}, {} Krylov its), residual {:.1e}{distance}",
            human_time(report.time),
            human_time(self.end),
            human_time(report.step_size),
            report.iterations,
            report.balance_error,
        ));
    }

    pub fn writing(&self) {
        self.bar.set_message("writing outputs");
    }

    pub fn println(&self, line: &str) {
        if self.quiet {
            return;
        }
        self.bar.suspend(|| eprintln!("{line}"));
    }

    pub fn finish(&self, message: &str) {
        self.bar.finish_and_clear();
        if !self.quiet {
            eprintln!("{message}");
        }
    }
}
