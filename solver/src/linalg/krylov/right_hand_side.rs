//! The right-hand side `b` of a Krylov solve, dense or stored as its nonzero entries.

use super::super::real::Real;
use super::super::vector::{dot, norm, residual_from_product, CHUNK};
use rayon::prelude::*;

/// A vector stored as its nonzero entries (ascending indices).
#[derive(Clone, Debug, Default)]
pub struct SparseVector {
    pub len: usize,
    pub entries: Vec<(usize, f64)>,
}

impl SparseVector {
    /// The nonzero entries of `dense`.
    pub fn from_dense(dense: &[f64]) -> Self {
        let entries = dense.iter().enumerate().filter(|(_, &v)| v != 0.0).map(|(i, &v)| (i, v)).collect();
        SparseVector { len: dense.len(), entries }
    }

    pub fn to_dense(&self) -> Vec<f64> {
        let mut d = vec![0.0; self.len];
        self.entries.iter().for_each(|&(i, v)| d[i] = v);
        d
    }
}

/// `b` of `A x = b`, for vectors of f64 (default) or f32.
#[derive(Clone, Copy, Debug)]
pub enum RightHandSide<'a, T = f64> {
    Dense(&'a [T]),
    Sparse(&'a SparseVector),
}

impl<T: Real> RightHandSide<'_, T> {
    pub fn len(&self) -> usize {
        match self {
            RightHandSide::Dense(b) => b.len(),
            RightHandSide::Sparse(b) => b.len,
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// `‖b‖₂`.
    pub fn norm(&self) -> f64 {
        match self {
            RightHandSide::Dense(b) => norm(b),
            RightHandSide::Sparse(b) => b.entries.iter().map(|(_, v)| v * v).sum::<f64>().sqrt(),
        }
    }

    /// `b · v`.
    pub fn dot(&self, v: &[T]) -> f64 {
        match self {
            RightHandSide::Dense(b) => dot(b, v),
            RightHandSide::Sparse(b) => b.entries.iter().map(|&(i, bi)| bi * v[i].to_f64()).sum(),
        }
    }

    /// `r ← b − r` (turns `r = A x` into the residual).
    pub fn residual_from_product(&self, r: &mut [T]) {
        match self {
            RightHandSide::Dense(b) => residual_from_product(b, r),
            RightHandSide::Sparse(b) => {
                // −r + b is b − r exactly.
                r.par_iter_mut().with_min_len(CHUNK).for_each(|v| *v = -*v);
                b.entries.iter().for_each(|&(i, v)| r[i] = T::from_f64(r[i].to_f64() + v));
            }
        }
    }
}
