//! Parameter sweeps: sweep file, expansion into cases, local runs, Slurm arrays, collection.
//!
//! A sweep file names a base case and axes (dotted case keys with lists or ranges of values); `expand` turns
//! it into case texts that go through the normal case path; `run_local` runs the cases not yet done into
//! `DIR/cases/<id>/` (done = `done.json` with the case's hash, written last); `slurm` writes the same as a job
//! array; `collect` gathers the finished cases into `DIR/sweep.csv` and `DIR/sweep.h5`.

pub mod aggregate;
pub mod axis;
pub mod collect;
pub mod crossing_figure;
pub mod crossing_rounds;
pub mod crossing_table;
pub mod done_marker;
pub mod error;
pub mod expand;
pub mod find_table;
/// The sweep folder's lock (shared with the output folder of `run`).
pub use crate::io::folder_lock as lock;
pub mod memory_reuse;
pub mod plan_record;
pub mod replicate_groups;
pub mod run_local;
pub mod sensing_columns;
pub mod slurm;
pub mod sweep_curves;
pub mod sweep_file;
pub mod table_axis;

pub use error::SweepError;
pub use expand::{Plan, PlannedCase};
pub use sweep_file::{Axis, Combine, SweepFile};
