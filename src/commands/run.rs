//! `plumefield run CASE`: the command over the run engine (`crate::engine`), which solves the case and writes
//! its outputs.

pub use crate::engine::transient::{CheckpointEvery, TransientOptions};
pub use crate::engine::{execute, execute_with};
