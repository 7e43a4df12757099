//! What a run hands to its readers, as typed values: the summary of a run ([`summary::RunSummary`],
//! `summary.json`). The file writers themselves are in `crate::io`.

pub mod summary;

pub use summary::RunSummary;
