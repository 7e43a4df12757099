//! Progress display for the numerical stages of one run (the numerics are `solver::solve_case`).

use indicatif::{ProgressBar, ProgressStyle};
use solver::solve_case::Stage;

/// A stage-by-stage progress line on stderr in the house layout, e.g. `plumefield ▸ 2 of 4 · flow · 3s`
/// (indicatif hides it when stderr is not a terminal).
pub struct StageProgress {
    bar: ProgressBar,
}

impl StageProgress {
    pub fn new(stages: u64) -> Self {
        let bar = ProgressBar::new(stages);
        bar.set_style(
            ProgressStyle::with_template("plumefield ▸ {pos} of {len} · {msg} · {elapsed}")
                .unwrap_or_else(|_| ProgressStyle::default_bar()),
        );
        bar.enable_steady_tick(std::time::Duration::from_millis(200));
        StageProgress { bar }
    }

    pub fn stage(&self, message: &str) {
        self.bar.inc(1);
        self.bar.set_message(message.to_string());
    }

    pub fn numerical_stage(&self, stage: Stage) {
        self.stage(match stage {
            Stage::Geometry => "embedded-boundary geometry",
            Stage::Flow => "flow",
            Stage::Transport => "ligand transport",
            Stage::Sensing => "per-cell sensing",
        });
    }

    pub fn println(&self, line: &str) {
        self.bar.suspend(|| eprintln!("{line}"));
    }

    pub fn finish(&self, message: &str) {
        self.bar.finish_and_clear();
        eprintln!("{message}");
    }
}
