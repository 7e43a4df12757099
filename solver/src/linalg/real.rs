//! The floating-point types a multigrid level may store: f64 for the exact operator, f32 for the hierarchy
//! (half the memory traffic; the preconditioner only needs a few digits, the Krylov method keeps f64).

use std::ops::{Add, AddAssign, Div, Mul, Neg, Sub, SubAssign};

/// A real scalar a stencil or a multigrid vector is stored in.
pub trait Real:
    Copy
    + Send
    + Sync
    + Default
    + PartialOrd
    + std::fmt::Debug
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
    + AddAssign
    + SubAssign
    + 'static
{
    const ZERO: Self;
    const ONE: Self;
    fn from_f64(value: f64) -> Self;
    fn to_f64(self) -> f64;
}

impl Real for f64 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    #[inline]
    fn from_f64(value: f64) -> Self {
        value
    }
    #[inline]
    fn to_f64(self) -> f64 {
        self
    }
}

impl Real for f32 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    #[inline]
    fn from_f64(value: f64) -> Self {
        value as f32
    }
    #[inline]
    fn to_f64(self) -> f64 {
        self as f64
    }
}
