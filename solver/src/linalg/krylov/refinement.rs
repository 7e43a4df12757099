//! Mixed-precision iterative refinement (Moler 1967, J. ACM 14, 316–321, with a preconditioned Krylov inner
//! solve as in Carson & Higham 2018, SIAM J. Sci. Comput. 40, A817–A847; both from memory):
//!
//! ```text
//! r = b − A x           (f64, the caller's exact operator)
//! A d ≈ r               (f32: right-preconditioned BiCGSTAB to a modest relative tolerance)
//! x ← x + d             (f64)
//! ```
//!
//! Only `x` stays in f64; the Krylov vectors, the inner right-hand side and the correction are f32, half the
//! memory and memory traffic of an f64 solve. Each round gains the inner tolerance's digits until the f64
//! residual meets the target, which an f32 solve alone could not reach.

use super::super::real::Real;
use super::super::vector::CHUNK;
use super::bicgstab::bicgstab;
use super::{BicgstabParams, BicgstabWork, KrylovParams, LinearOperator, RightHandSide, Shadow};
use super::{SolveError, SolveInfo};
use rayon::prelude::*;

/// Parameters of a refinement solve.
#[derive(Clone, Debug, PartialEq)]
pub struct RefinementParams {
    /// Target of the f64 `‖b − A x‖₂ / ‖b‖₂`, and the cap on inner iterations over all rounds.
    pub krylov: KrylovParams,
    /// Relative residual each inner f32 solve is asked for (default 1e-4: f32 carries about 7 digits, and the
    /// recursively updated inner residual drifts from the true one well before that).
    pub inner_tolerance: f64,
    /// Iterations of one inner solve at most (default 20): an f32 solve that cannot reach its tolerance ends
    /// the round instead of the whole iteration budget.
    pub inner_max_iterations: usize,
}

impl Default for RefinementParams {
    fn default() -> Self {
        RefinementParams { krylov: KrylovParams::default(), inner_tolerance: 1e-4, inner_max_iterations: 20 }
    }
}

/// What the caller's residual pass reports about `r = b − A x`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OuterResidual {
    /// `‖r‖₂` in f64.
    pub norm: f64,
    /// How far a further criterion is from being met (≤ 1: met), as in [`super::bicgstab_until`].
    pub unmet: f64,
}

/// The f32 vectors of a refinement solve: the inner BiCGSTAB's five, the inner right-hand side and the
/// correction.
#[derive(Default)]
pub struct RefinementWork {
    krylov: BicgstabWork<f32>,
    rhs: Vec<f32>,
    correction: Vec<f32>,
}

impl RefinementWork {
    /// Bytes held.
    pub fn memory_bytes(&self) -> usize {
        self.krylov.memory_bytes() + 4 * (self.rhs.capacity() + self.correction.capacity())
    }
}

/// `out = scale · r` rounded to f32, returning `‖r‖₂²` of the f64 values (fixed-order sum): the store a
/// residual pass of [`refine_until`] ends with, one block of the vector at a time if it likes.
pub fn store_scaled_residual(r: &[f64], scale: f64, out: &mut [f32]) -> f64 {
    assert_eq!(r.len(), out.len());
    let partial: Vec<f64> = out
        .par_chunks_mut(CHUNK)
        .zip(r.par_chunks(CHUNK))
        .map(|(oc, rc)| {
            let mut sum = 0.0;
            for (o, &v) in oc.iter_mut().zip(rc) {
                *o = (scale * v) as f32;
                sum += v * v;
            }
            sum
        })
        .collect();
    partial.iter().sum()
}

/// Solves `A x = b` from the initial guess in `x` by refinement rounds. `residual(x, scale, out)` computes
/// `r = b − A x` in f64, writes `scale · r` into `out` (f32; [`store_scaled_residual`]) and reports
/// [`OuterResidual`]; `inner` and `precondition` are the f32 operator and preconditioner of the correction
/// solves. Stops when the relative residual meets the tolerance and `unmet ≤ 1`; as in
/// [`super::bicgstab_until`], an unmet criterion lowers the residual target to `relative/(2·unmet)`.
/// Reports inner iterations summed over the rounds. A round that does not halve the f64 residual ends the
/// solve with `NoConvergence` (the f32 correction cannot resolve what is left, e.g. a nearly singular system
/// whose iterates grow large): the caller may go on in f64 from the `x` reached.
pub fn refine_until(
    inner: &impl LinearOperator<f32>,
    mut precondition: impl FnMut(&[f32], &mut [f32]),
    mut residual: impl FnMut(&[f64], f64, &mut [f32]) -> OuterResidual,
    b_norm: f64,
    x: &mut [f64],
    params: &RefinementParams,
    work: &mut RefinementWork,
) -> Result<SolveInfo, SolveError> {
    let n = x.len();
    if !b_norm.is_finite() {
        return Err(SolveError::NonFinite { iteration: 0 });
    }
    if b_norm == 0.0 {
        x.iter_mut().for_each(|v| *v = 0.0);
        return Ok(SolveInfo::zero_right_hand_side());
    }
    work.rhs.resize(n, 0.0);
    work.correction.resize(n, 0.0);
    let tolerance = params.krylov.relative_tolerance;
    let mut target = tolerance;
    // The inner right-hand side is r/‖r_previous‖: O(1) whatever the units of the system.
    let mut scale = 1.0 / b_norm;
    let mut iterations = 0;
    let mut history: Vec<f64> = Vec::new();
    let mut previous = f64::INFINITY;
    loop {
        let outer = residual(x, scale, &mut work.rhs);
        let relative = outer.norm / b_norm;
        if !relative.is_finite() {
            return Err(SolveError::NonFinite { iteration: iterations });
        }
        history.push(relative);
        if relative <= target {
            if outer.unmet <= 1.0 {
                return Ok(SolveInfo { iterations, relative_residual: relative, residual_history: history });
            }
            target = relative / (2.0 * outer.unmet);
        }
        if iterations >= params.krylov.max_iterations || relative > 0.5 * previous {
            return Err(SolveError::NoConvergence {
                iterations,
                relative_residual: relative,
                residual_history: history,
            });
        }
        // Ask for what is left to gain, at most the inner tolerance's digits in one round.
        let inner_tolerance = (0.5 * target / relative).clamp(params.inner_tolerance, 0.5);
        let inner_params = BicgstabParams {
            krylov: KrylovParams {
                relative_tolerance: inner_tolerance,
                max_iterations: (params.krylov.max_iterations - iterations).min(params.inner_max_iterations),
            },
            shadow: Shadow::Unstored,
        };
        work.correction.iter_mut().for_each(|v| *v = 0.0);
        let (more, inner_history) = match bicgstab(
            inner,
            &mut precondition,
            RightHandSide::Dense(&work.rhs),
            &mut work.correction,
            &inner_params,
            &mut work.krylov,
        ) {
            Ok(info) => (info.iterations, info.residual_history),
            // An inner solve that stopped short still improves x; the f64 residual of the next round judges.
            Err(SolveError::NoConvergence { iterations, residual_history, .. }) => {
                (iterations, residual_history)
            }
            Err(SolveError::NonFinite { iteration }) => {
                return Err(SolveError::NonFinite { iteration: iterations + iteration })
            }
        };
        if more == 0 {
            return Err(SolveError::NoConvergence {
                iterations,
                relative_residual: relative,
                residual_history: history,
            });
        }
        iterations += more;
        // The inner history relative to ‖r‖, as an estimate of the outer one; the next round's f64 residual
        // takes the place of its last entry.
        let last = inner_history.len().saturating_sub(1);
        history.extend(inner_history[1.min(last)..last].iter().map(|h| h * relative));
        let step = 1.0 / scale;
        x.par_iter_mut()
            .zip(work.correction.par_iter())
            .with_min_len(CHUNK)
            .for_each(|(xi, &d)| *xi += step * d.to_f64());
        scale = 1.0 / outer.norm;
        previous = relative;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Nonsymmetric tridiagonal matrix in either precision (sums in f64).
    fn tridiagonal<T: Real>(x: &[T], y: &mut [T]) {
        let n = x.len();
        for i in 0..n {
            let left = if i > 0 { x[i - 1].to_f64() } else { 0.0 };
            let right = if i + 1 < n { x[i + 1].to_f64() } else { 0.0 };
            y[i] = T::from_f64(2.5 * x[i].to_f64() - 1.6 * left - 0.4 * right);
        }
    }

    fn jacobi(r: &[f32], z: &mut [f32]) {
        z.iter_mut().zip(r).for_each(|(z, r)| *z = r / 2.5);
    }

    /// Refinement reaches an f64 residual (1e-13) far below what f32 vectors can represent, on a right-hand
    /// side in SI-like magnitudes (1e-15) that would underflow an unscaled f32 solve's squared norms; the
    /// reported residual is the true one.
    #[test]
    fn reaches_a_residual_below_single_precision() {
        let n = 400;
        let b: Vec<f64> = (0..n).map(|i| 1e-15 * (((i * 7) % 11) as f64 - 5.0)).collect();
        let b_norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
        let mut product = vec![0.0; n];
        let mut residual = |x: &[f64], scale: f64, out: &mut [f32]| {
            tridiagonal(x, &mut product);
            let r: Vec<f64> = b.iter().zip(&product).map(|(b, p)| b - p).collect();
            OuterResidual { norm: store_scaled_residual(&r, scale, out).sqrt(), unmet: 0.0 }
        };
        let params = RefinementParams {
            krylov: KrylovParams { relative_tolerance: 1e-13, max_iterations: 500 },
            ..RefinementParams::default()
        };
        let mut x = vec![0.0; n];
        let info = refine_until(
            &tridiagonal::<f32>,
            jacobi,
            &mut residual,
            b_norm,
            &mut x,
            &params,
            &mut RefinementWork::default(),
        )
        .expect("converges");
        let mut ax = vec![0.0; n];
        tridiagonal(&x, &mut ax);
        let true_relative = b.iter().zip(&ax).map(|(b, a)| (b - a).powi(2)).sum::<f64>().sqrt() / b_norm;
        assert!(true_relative <= 1e-13, "true residual {true_relative:e}");
        assert_eq!(info.relative_residual.to_bits(), true_relative.to_bits());
        assert_eq!(info.residual_history.len(), info.iterations + 1, "{info:?}");
    }

    /// A further criterion keeps the rounds going past the tolerance until it holds.
    #[test]
    fn further_criterion_keeps_refining() {
        let n = 200;
        let b: Vec<f64> = (0..n).map(|i| (i as f64 * 0.3).sin()).collect();
        let b_norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
        let bound = 1e-12 * b_norm;
        let run = |criterion: bool| {
            let mut product = vec![0.0; n];
            let mut worst = 0.0;
            let mut residual = |x: &[f64], scale: f64, out: &mut [f32]| {
                tridiagonal(x, &mut product);
                let r: Vec<f64> = b.iter().zip(&product).map(|(b, p)| b - p).collect();
                worst = r.iter().fold(0.0f64, |m, v| m.max(v.abs()));
                let unmet = if criterion { worst / bound } else { 0.0 };
                OuterResidual { norm: store_scaled_residual(&r, scale, out).sqrt(), unmet }
            };
            let params = RefinementParams {
                krylov: KrylovParams { relative_tolerance: 1e-6, max_iterations: 500 },
                ..RefinementParams::default()
            };
            let mut x = vec![0.0; n];
            let info = refine_until(
                &tridiagonal::<f32>,
                jacobi,
                &mut residual,
                b_norm,
                &mut x,
                &params,
                &mut RefinementWork::default(),
            )
            .expect("converges");
            (info.iterations, worst)
        };
        let (plain_iterations, plain_worst) = run(false);
        assert!(plain_worst > bound, "the criterion is not trivially met: {plain_worst:e}");
        let (iterations, worst) = run(true);
        assert!(worst <= bound && iterations > plain_iterations, "{iterations} iterations, {worst:e}");
    }
}
