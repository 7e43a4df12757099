//! Published analytic reference solutions (each file names its source) and the verification cases behind
//! `plumefield verify`.

pub mod cases;
pub mod reference;
