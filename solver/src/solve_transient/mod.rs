//! One transient case end to end, and its time loop: transient transport of the secreted ligand,
//!
//! ```text
//! φ ∂c/∂t + ∇·(u c − D∇c) = −k c   in the fluid,   with the surface, chamber and far-field conditions in time,
//! ```
//!
//! by implicit variable-step BDF2 on the *assembled steady operator*, with the step pieces of
//! `crate::transport::transient` (BDF coefficients, the step solver, the projected guess, the switched-on far
//! field, per-cell secretion starts, the step balance). Flow may change in steps ([`FlowPhase`]); every step
//! advances the per-cell sensing window (`crate::post::sensing_window`). This module sits above the steady case
//! ([`case`] reuses `solve_case::solve_flow` and the steady transport for its reference) and above `post`.
//!
//! With `TransientParams::split_cells` the own field of each chosen cell is integrated beside the total
//! (`own_fields`: the self/neighbour split in time, one more solve per accepted step and cell).
//!
//! Numerics only: an observer ([`TransientObserver`]) receives every accepted step and every output time, and
//! decides what to write; the run's state ([`TransientState`]) can be flattened for checkpoints.

pub mod case;
pub mod integrate;
mod own_fields;
pub mod state;

pub use crate::post::sensing_window::WindowCounts;
pub use crate::transport::transient::StepBalance;
pub use case::{solve_transient_case, TransientCase, TransientSolution, TransientTiming};
pub use integrate::{initial_state, integrate};
pub use state::{Crossings, OwnField, TransientState, FRACTIONS};

use crate::embedded::FacetStencils;
use crate::linalg::{KrylovParams, MultigridParams};
use crate::post::{CellSensing, SensingModel};
use crate::problem::{ChamberBoundaries, LigandParameters};
use mesh::{EmbeddedGeometry, Layout};

/// The flow in force from `start` on (until the next phase).
#[derive(Clone, Copy)]
pub struct FlowPhase<'a> {
    /// Time from which this flow holds (s).
    pub start: f64,
    /// Signed volumetric face fluxes (m³/s).
    pub face_flux: &'a [Vec<f64>; 3],
    /// Undisturbed superficial speed along +x (m/s), for the far-field faces.
    pub mean_velocity: f64,
}

/// Everything the time loop needs about one case.
pub struct TransientProblem<'a> {
    pub geometry: &'a EmbeddedGeometry,
    pub stencils: &'a FacetStencils,
    pub layout: &'a Layout,
    pub boundaries: ChamberBoundaries,
    pub ligand: LigandParameters,
    /// At least one; sorted by start; the first holds from the start of the run.
    pub phases: Vec<FlowPhase<'a>>,
    /// Per cell: the time its secretion switches on (s).
    pub secretion_start: Vec<f64>,
    pub sensing: SensingModel,
}

/// Fixed or adaptive steps.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum TimeStepping {
    Fixed {
        step: f64,
    },
    /// Steps chosen so that the embedded estimate of the local error stays below `tolerance · max c`.
    Adaptive {
        initial_step: f64,
        tolerance: f64,
        max_step: f64,
    },
}

/// Steady values the approach is measured against.
#[derive(Clone, Debug)]
pub struct SteadyReference {
    pub concentration: Vec<f64>,
    /// Per cell: the sensed (counting) rate at steady state (molecules/s).
    pub sensed_rate: Vec<f64>,
    pub outlet_concentration: Option<f64>,
}

/// How to run.
#[derive(Clone, Debug)]
pub struct TransientParams {
    pub start_time: f64,
    pub end_time: f64,
    pub stepping: TimeStepping,
    /// Times (s) at which the observer receives the fields; each ends a step.
    pub output_times: Vec<f64>,
    /// `relative_tolerance` is the steady solver's: each step is solved to the absolute residual a steady solve
    /// of the same forcing would reach.
    pub krylov: KrylovParams,
    pub multigrid: MultigridParams,
    /// Cumulative counts start here (s).
    pub window_start: f64,
    /// Window direction error at or below which a cell reads its cue (the time to a readable cue is measured
    /// against it, and a stop at steady state waits for cells still approaching it).
    pub readable_error: f64,
    pub steady: Option<SteadyReference>,
    /// Stop once `‖c − c_steady‖/‖c_steady‖` falls below this (after the last event).
    pub stop_at_steady: Option<f64>,
    /// Far-field faces use the switched-on solution (zero initial field) rather than the steady condition.
    pub switched_on_far_field: bool,
    /// Cells (layout indices, ascending) whose own field is integrated beside the total for the self/neighbour
    /// split (one more solve per accepted step each; see `own_fields`); empty for none.
    pub split_cells: Vec<usize>,
}

/// One accepted step, for progress display and checkpoints.
#[derive(Clone, Copy, Debug)]
pub struct StepReport {
    pub time: f64,
    pub step_size: f64,
    /// 1 (BDF1) or 2 (BDF2).
    pub order: usize,
    pub iterations: usize,
    pub balance_error: f64,
    pub distance_to_steady: Option<f64>,
    /// At steady state with `stop_at_steady`: cells whose window error, not yet readable, will reach the
    /// readable level before the end time at the present rates (the run goes on for them); 0 otherwise.
    pub held_for_readable: usize,
    /// Wall seconds of the step spent on the own fields of the self/neighbour split (0 without it).
    pub split_seconds: f64,
}

/// The fields at an output time.
pub struct TransientOutput<'a> {
    pub index: usize,
    pub time: f64,
    /// False for a final time that is not on the output grid (early stop at steady state).
    pub regular: bool,
    pub concentration: &'a [f64],
    pub sensing: &'a [CellSensing],
    /// The self/neighbour split of every chosen cell whose own field is intact (`TransientState::own_fields`
    /// holds the failed ones); empty without a split.
    pub splits: &'a [crate::post::decompose::CellSplit],
    pub counts: &'a WindowCounts,
    pub balance: StepBalance,
    pub outlet_concentration: Option<f64>,
}

/// Receives the run as it goes; an `Err` stops the run with that message.
pub trait TransientObserver {
    fn step(&mut self, state: &TransientState, report: &StepReport) -> Result<(), String>;
    fn output(&mut self, output: &TransientOutput<'_>) -> Result<(), String>;
}

/// An observer that keeps nothing.
pub struct NoObserver;

impl TransientObserver for NoObserver {
    fn step(&mut self, _: &TransientState, _: &StepReport) -> Result<(), String> {
        Ok(())
    }
    fn output(&mut self, _: &TransientOutput<'_>) -> Result<(), String> {
        Ok(())
    }
}

#[derive(thiserror::Error, Debug)]
pub enum TransientError {
    #[error("the transient solve failed at t = {time:.6e} s: {source}")]
    Solve { time: f64, source: crate::linalg::SolveError },
    #[error("the transient solve failed at t = {time:.6e} s: non-finite concentration")]
    NonFinite { time: f64 },
    #[error("the time step fell to {step:.3e} s at t = {time:.6e} s")]
    StepTooSmall { time: f64, step: f64 },
    #[error("the initial field has {found} values but the grid has {expected} cells")]
    InitialLength { found: usize, expected: usize },
    #[error("the saved state splits cells {found:?} but the case asks for {expected:?}")]
    SplitCells { found: Vec<usize>, expected: Vec<usize> },
    #[error("{0}")]
    Observer(String),
    #[error(transparent)]
    Case(#[from] crate::solve_case::CaseSolveError),
}
