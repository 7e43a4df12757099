//! One file (or folder) per command: the command-line shell in `main.rs` parses flags and calls these.

pub mod collect;
pub mod estimate;
pub mod layout;
pub mod plot;
pub mod run;
pub mod sweep;
pub mod verify;
