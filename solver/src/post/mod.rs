//! Post-processing of a solved case: what each cell senses, the mass balance, counting noise, the pressure
//! across each cell.

pub mod cell_pressure_drop;
pub mod chamber_estimates;
pub mod counting_noise;
pub mod decompose;
pub mod estimates;
pub mod integrate_surface;
pub mod local_flow;
pub mod mass_balance;
pub mod sensing_window;

pub use cell_pressure_drop::cell_pressure_drop;
pub use integrate_surface::{
    cell_sensing, cell_sensing_in_local_flow, local_flow_per_cell, CellSensing, SensingModel,
};
pub use mass_balance::{mass_balance, MassBalance};
