//! The stages of one run as the user sees them: the progress line on stderr and the meter of each stage's wall
//! time and peak memory for `summary.json` (the numerics are `solver::solve_case`).

use std::time::Instant;

use indicatif::{ProgressBar, ProgressStyle};
use numkit::meter;
use solver::solve_case::Stage;

use crate::outputs::summary::{PeakScope, Resources, SplitCost, StageCost};

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
            Stage::TimeLoop => "time steps",
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

/// Hands the free pages of the allocator's heaps back to the kernel. Arrays that glibc placed on its heaps
/// (below its dynamic `mmap` threshold, up to 32 MiB each, so every grid array of a small case) stay resident
/// after they are freed; a stage's arrays that the next stage no longer holds then still count in that stage's
/// memory, and in what other processes cannot use. Not in sweeps, whose cases share the process and keep freed
/// memory on purpose (`sweep::memory_reuse`).
fn release_freed_heap() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: `malloc_trim` only returns unused pages of glibc's heaps to the kernel, under its own locks.
    unsafe {
        libc::malloc_trim(0);
    }
}

/// The stages whose wall time and peak resident memory `summary.json` → `resources` records.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum MeteredStage {
    Geometry,
    Flow,
    Transport,
    Post,
    SelfNeighbourSplit,
    SteadyReference,
    TimeLoop,
    Write,
}

impl MeteredStage {
    /// The metered stage that a numerical stage of the solver starts (`steady`: of a steady run).
    pub fn of(stage: Stage, steady: bool) -> MeteredStage {
        match stage {
            Stage::Geometry => MeteredStage::Geometry,
            Stage::Flow => MeteredStage::Flow,
            Stage::Transport if steady => MeteredStage::Transport,
            Stage::Transport => MeteredStage::SteadyReference,
            Stage::TimeLoop => MeteredStage::TimeLoop,
            Stage::Sensing => MeteredStage::Post,
        }
    }
}

/// Wall time and peak resident memory stage by stage. Each stage starts with the kernel's high-water mark
/// reset to the current resident set (Linux ≥ 4.0, `clear_refs`), so its peak is its own; where the reset is
/// refused a stage's peak is the process's peak so far, and where `/proc` is missing, or several cases share
/// the process, there is no peak ([`PeakScope`] says which).
pub struct StageMeter {
    started: Instant,
    scope: PeakScope,
    current: Option<(MeteredStage, Instant)>,
    done: Vec<(MeteredStage, StageCost)>,
    /// Seconds measured inside a stage that belong to a stage of their own: (inside, own stage, seconds).
    carved: Vec<(MeteredStage, MeteredStage, f64)>,
}

impl Default for StageMeter {
    fn default() -> Self {
        Self::new()
    }
}

impl StageMeter {
    /// Starts the run's clock.
    pub fn new() -> Self {
        let scope = if meter::peak_resident_bytes().is_none() {
            PeakScope::Unavailable
        } else if meter::reset_peak_resident() {
            PeakScope::Stage
        } else {
            PeakScope::SinceStart
        };
        StageMeter { started: Instant::now(), scope, current: None, done: Vec::new(), carved: Vec::new() }
    }

    /// Wall times only, and no reset of the process's high-water mark (for cases that share the process).
    pub fn times_only() -> Self {
        StageMeter {
            started: Instant::now(),
            scope: PeakScope::Unavailable,
            current: None,
            done: Vec::new(),
            carved: Vec::new(),
        }
    }

    /// Ends the current stage (if any) and starts `stage`.
    pub fn begin(&mut self, stage: MeteredStage) {
        self.end();
        if self.scope != PeakScope::Unavailable {
            release_freed_heap();
        }
        if self.scope == PeakScope::Stage && !meter::reset_peak_resident() {
            self.scope = PeakScope::SinceStart;
        }
        self.current = Some((stage, Instant::now()));
    }

    /// Records `seconds` of `inside` (a stage run or running) as a stage of their own, `stage`: work
    /// interleaved with another stage's, such as the own fields of a transient split inside the time loop. The
    /// seconds leave `inside`'s wall time; `stage`'s peak memory is `inside`'s (they ran together).
    pub fn carve(&mut self, inside: MeteredStage, stage: MeteredStage, seconds: f64) {
        self.carved.push((inside, stage, seconds));
    }

    /// How many allocations of `bytes` fit at once between the resident memory now and the peak that the ended
    /// `stage` reached (at least one), so that work sized by it stays under that peak; unbounded where memory is
    /// not measured.
    pub fn fitting_under_peak_of(&self, stage: MeteredStage, bytes: usize) -> usize {
        let peak = self.done.iter().find(|(s, _)| *s == stage).and_then(|(_, cost)| cost.peak_resident_bytes);
        match (self.scope, peak, meter::resident_bytes()) {
            (PeakScope::Unavailable, _, _) | (_, None, _) | (_, _, None) => usize::MAX,
            (_, Some(peak), Some(now)) => (peak.saturating_sub(now) as usize / bytes.max(1)).max(1),
        }
    }

    /// Ends the current stage.
    pub fn end(&mut self) {
        if let Some((stage, _)) = self.current {
            let cost = self.current_cost();
            self.done.push((stage, cost));
            self.current = None;
        }
    }

    fn current_cost(&self) -> StageCost {
        let wall_s = self.current.map_or(0.0, |(_, t)| t.elapsed().as_secs_f64());
        let peak = match self.scope {
            PeakScope::Unavailable => None,
            _ => meter::peak_resident_bytes(),
        };
        StageCost { wall_s, peak_resident_bytes: peak }
    }

    /// The stages so far, the current one measured up to now, and the run's wall time so far.
    pub fn resources(&self, self_neighbour: Option<SplitCost>) -> Resources {
        let mut r = Resources {
            total_s: self.started.elapsed().as_secs_f64(),
            peak_memory_scope: self.scope,
            self_neighbour,
            ..Resources::default()
        };
        let current = self.current.map(|(stage, _)| (stage, self.current_cost()));
        let mut stages: Vec<(MeteredStage, StageCost)> = self.done.iter().copied().chain(current).collect();
        for &(inside, stage, seconds) in &self.carved {
            let Some(from) = stages.iter_mut().find(|(s, _)| *s == inside) else { continue };
            from.1.wall_s -= seconds;
            let cost = StageCost { wall_s: seconds, peak_resident_bytes: from.1.peak_resident_bytes };
            stages.push((stage, cost));
        }
        for (stage, cost) in stages {
            let slot = match stage {
                MeteredStage::Geometry => &mut r.geometry,
                MeteredStage::Flow => &mut r.flow,
                MeteredStage::Transport => &mut r.transport,
                MeteredStage::Post => &mut r.post,
                MeteredStage::SelfNeighbourSplit => &mut r.self_neighbour_split,
                MeteredStage::SteadyReference => &mut r.steady_reference,
                MeteredStage::TimeLoop => &mut r.time_loop,
                MeteredStage::Write => &mut r.write,
            };
            *slot = Some(cost);
        }
        r
    }
}
