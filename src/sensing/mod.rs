//! Where sensing fails: statistics of the per-cell sensing columns over a run (failed fraction, quantiles,
//! slabs along the flow) and over the seeds of a sweep (Student-t intervals). Pure numerics on slices: the
//! callers (`run`, `collect`) read and write the files.

pub mod crossing_search;
pub mod statistics;
pub mod student_t;
