//! Analytic reference solutions, one file per published result.
