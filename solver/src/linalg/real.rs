//! The floating-point types a multigrid level may store: f64 for the exact operator, f32 for the hierarchy
//! (half the memory traffic; the preconditioner only needs a few digits; a Krylov method keeps f64, or f32 inside
//! an f64 iterative refinement) — and
//! whether the line kernels may run in 256-bit vectors.
//!
//! The line kernel of the operator product is compiled twice: for the baseline x86-64 (SSE2, two f64 lanes)
//! and for AVX2 (four), chosen at run time. Both perform the same IEEE operations in the same order — Rust
//! neither fuses a multiply and an add nor reassociates sums without being told — so the results are the same
//! bits on every machine.

/// True where the CPU runs AVX2 (checked once by the standard library, then a cached load).
#[inline]
pub(crate) fn wide_vectors() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("avx2")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

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
    /// How a multigrid level at this precision stores its off-diagonal coefficients: f64 as itself (exact), f32
    /// as bfloat16 (the upper half of the f32 bits), because the smoothing sweeps stream the coefficients from
    /// memory and a preconditioner needs only a few digits of them.
    type Coefficient: Copy + Send + Sync + Default + std::fmt::Debug + 'static;
    fn from_f64(value: f64) -> Self;
    fn to_f64(self) -> f64;
    /// `value` rounded to the coefficient storage (to nearest, ties to even).
    fn to_coefficient(value: f64) -> Self::Coefficient;
    /// A stored coefficient, exactly.
    fn from_coefficient(stored: Self::Coefficient) -> Self;
}

impl Real for f64 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    type Coefficient = f64;
    #[inline]
    fn from_f64(value: f64) -> Self {
        value
    }
    #[inline]
    fn to_f64(self) -> f64 {
        self
    }
    #[inline]
    fn to_coefficient(value: f64) -> f64 {
        value
    }
    #[inline]
    fn from_coefficient(stored: f64) -> f64 {
        stored
    }
}

impl Real for f32 {
    const ZERO: Self = 0.0;
    const ONE: Self = 1.0;
    type Coefficient = u16;
    #[inline]
    fn from_f64(value: f64) -> Self {
        value as f32
    }
    #[inline]
    fn to_f64(self) -> f64 {
        self as f64
    }
    /// bfloat16 of the f32 nearest to `value` (finite coefficients only; 8 significant bits).
    #[inline]
    fn to_coefficient(value: f64) -> u16 {
        let bits = (value as f32).to_bits();
        let rounded = bits.wrapping_add(0x7fff + ((bits >> 16) & 1));
        (rounded >> 16) as u16
    }
    #[inline]
    fn from_coefficient(stored: u16) -> f32 {
        f32::from_bits((stored as u32) << 16)
    }
}
