//! Figures (PNG) of a run and of a sweep, drawn with plotters.

pub mod sweep_curves;
