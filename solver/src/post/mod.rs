//! placeholder, filled in by the post implementation
