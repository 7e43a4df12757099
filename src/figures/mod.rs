//! Figures (PNG) of a run, drawn with plotters; a sweep's figures (`sweep/sweep_curves.rs`) use the same style.
//!
//! Run figures: [`run_figures::draw_run_figures`] reads a run's output folder ([`run_data`]) and draws one file
//! per figure (one figure per file here too); [`style`] holds the font, colour map and atomic write.

pub mod anisotropy_map;
pub mod anisotropy_profile;
pub mod approach_to_steady;
pub mod concentration_slice;
pub mod direction_error_histogram;
pub mod run_data;
pub mod run_figures;
pub mod self_and_neighbour_signal;
pub mod style;
