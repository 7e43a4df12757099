//! What a run hands to its readers, as typed values: the per-cell columns ([`columns`], the registry behind
//! `cells.csv`, `/cells/*` and `cells_timeseries.csv`) and the summary of a run ([`summary::RunSummary`],
//! `summary.json`). The file writers themselves are in `crate::io`.

pub mod columns;
pub mod summary;

pub use summary::RunSummary;
