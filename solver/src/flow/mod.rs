//! placeholder, filled in by the flow implementation
