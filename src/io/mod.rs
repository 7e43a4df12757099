//! Output writers.
