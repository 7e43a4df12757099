//! placeholder, filled in by the transport implementation
