//! Right-preconditioned BiCGSTAB (van der Vorst 1992, SIAM J. Sci. Stat. Comput. 13, 631–644, Alg. "BiCGSTAB"
//! with preconditioning on the right, from memory) for nonsymmetric `A x = b`.
//!
//! With right preconditioning the recursively updated residual is the residual of the *unpreconditioned*
//! system, so the stopping test `‖b − A x‖ / ‖b‖ ≤ tol` is the user's; it is confirmed with the true residual
//! before returning, and the iteration restarts from the true residual if the two drifted apart.

use super::vector::{
    axpy, axpy_norm2, axpy_norm2_dot, dot, dot2, norm, residual_from_product, update_direction,
};
use thiserror::Error;

/// Stopping rule of the Krylov iteration.
#[derive(Clone, Debug, PartialEq)]
pub struct KrylovParams {
    /// Target of `‖b − A x‖₂ / ‖b‖₂`; default 1e-8.
    pub relative_tolerance: f64,
    /// Maximum number of BiCGSTAB iterations (two preconditioner applications each); default 300.
    pub max_iterations: usize,
}

impl Default for KrylovParams {
    fn default() -> Self {
        KrylovParams { relative_tolerance: 1e-8, max_iterations: 300 }
    }
}

/// What a converged solve reports.
#[derive(Clone, Debug, PartialEq)]
pub struct SolveInfo {
    /// BiCGSTAB iterations (a half iteration that converged counts as one).
    pub iterations: usize,
    /// True `‖b − A x‖₂ / ‖b‖₂` at return.
    pub relative_residual: f64,
    /// Relative residual before the first iteration and after every iteration.
    pub residual_history: Vec<f64>,
}

/// Why a solve failed; carries the state it stopped in.
#[derive(Error, Debug, Clone, PartialEq)]
pub enum SolveError {
    #[error("linear solver did not converge in {iterations} iterations (relative residual {relative_residual:.3e})")]
    NoConvergence { iterations: usize, relative_residual: f64, residual_history: Vec<f64> },
    #[error("linear solver produced a non-finite value at iteration {iteration}")]
    NonFinite { iteration: usize },
}

/// The six work vectors of one BiCGSTAB solve, kept by callers that solve many systems of one size (time
/// steps): allocating them afresh costs a page fault per 4 KiB on first touch, about a tenth of a time step at
/// 128³.
#[derive(Default)]
pub struct BicgstabWork {
    r: Vec<f64>,
    r0: Vec<f64>,
    p: Vec<f64>,
    v: Vec<f64>,
    y: Vec<f64>,
    t: Vec<f64>,
}

impl BicgstabWork {
    /// Work vectors for systems of `n` unknowns.
    pub fn new(n: usize) -> Self {
        let mut work = BicgstabWork::default();
        work.resize(n);
        work
    }

    fn resize(&mut self, n: usize) {
        for v in [&mut self.r, &mut self.r0, &mut self.p, &mut self.v, &mut self.y, &mut self.t] {
            v.resize(n, 0.0);
        }
    }
}

/// Solves `A x = b` from the initial guess in `x`. `apply(u, y)` sets `y = A u`; `precondition(r, z)` sets
/// `z ≈ A⁻¹ r` (a fixed linear map, one multigrid cycle here).
pub fn bicgstab(
    apply: impl Fn(&[f64], &mut [f64]),
    precondition: impl FnMut(&[f64], &mut [f64]),
    b: &[f64],
    x: &mut [f64],
    params: &KrylovParams,
) -> Result<SolveInfo, SolveError> {
    bicgstab_with_work(apply, precondition, b, x, params, &mut BicgstabWork::default())
}

/// [`bicgstab`] on the caller's work vectors (resized to `b.len()` if needed). The result does not depend on
/// what the work vectors held before.
pub fn bicgstab_with_work(
    apply: impl Fn(&[f64], &mut [f64]),
    mut precondition: impl FnMut(&[f64], &mut [f64]),
    b: &[f64],
    x: &mut [f64],
    params: &KrylovParams,
    work: &mut BicgstabWork,
) -> Result<SolveInfo, SolveError> {
    let n = b.len();
    assert_eq!(x.len(), n, "bicgstab: x and b differ in length");
    let b_norm = norm(b);
    if !b_norm.is_finite() {
        return Err(SolveError::NonFinite { iteration: 0 });
    }
    if b_norm == 0.0 {
        x.iter_mut().for_each(|v| *v = 0.0);
        return Ok(SolveInfo { iterations: 0, relative_residual: 0.0, residual_history: vec![0.0] });
    }
    let tol = params.relative_tolerance;
    work.resize(n);
    let BicgstabWork { r, r0, p, v, y, t } = work;
    let (r, r0, p, v, y, t) = (&mut r[..], &mut r0[..], &mut p[..], &mut v[..], &mut y[..], &mut t[..]);
    let true_residual = |x: &[f64], r: &mut [f64]| -> f64 {
        apply(x, r);
        residual_from_product(b, r);
        norm(r) / b_norm
    };
    let mut relative = true_residual(x, r);
    if !relative.is_finite() {
        return Err(SolveError::NonFinite { iteration: 0 });
    }
    let mut history = vec![relative];
    if relative <= tol {
        return Ok(SolveInfo { iterations: 0, relative_residual: relative, residual_history: history });
    }
    // y: the preconditioned direction, then the preconditioned s.
    r0.copy_from_slice(r);
    p.iter_mut().for_each(|u| *u = 0.0);
    v.iter_mut().for_each(|u| *u = 0.0);
    let (mut rho, mut alpha, mut omega) = (1.0, 1.0, 1.0);
    let mut iteration = 0;
    let mut restarts_in_a_row = 0;
    // r0·r of the next iteration, when the last residual update computed it on the way (fused pass).
    let mut next_rho: Option<f64> = None;
    let no_convergence = |iterations: usize, relative: f64, history: Vec<f64>| SolveError::NoConvergence {
        iterations,
        relative_residual: relative,
        residual_history: history,
    };
    while iteration < params.max_iterations {
        iteration += 1;
        let rho_new = next_rho.take().unwrap_or_else(|| dot(r0, r));
        if !rho_new.is_finite() {
            return Err(SolveError::NonFinite { iteration });
        }
        if rho_new == 0.0 || (iteration > 1 && omega == 0.0) {
            // Breakdown: restart with the current residual as shadow vector.
            restarts_in_a_row += 1;
            if restarts_in_a_row > 3 {
                return Err(no_convergence(iteration, relative, history));
            }
            r0.copy_from_slice(r);
            p.iter_mut().for_each(|u| *u = 0.0);
            v.iter_mut().for_each(|u| *u = 0.0);
            (rho, alpha, omega) = (1.0, 1.0, 1.0);
            iteration -= 1;
            continue;
        }
        let beta = (rho_new / rho) * (alpha / omega);
        rho = rho_new;
        update_direction(beta, omega, r, v, p);
        precondition(p, y);
        apply(y, v);
        let r0v = dot(r0, v);
        alpha = rho / r0v;
        if !alpha.is_finite() {
            if r0v == 0.0 {
                restarts_in_a_row += 1;
                if restarts_in_a_row > 3 {
                    return Err(no_convergence(iteration, relative, history));
                }
                r0.copy_from_slice(r);
                (rho, alpha, omega) = (1.0, 1.0, 1.0);
                p.iter_mut().for_each(|u| *u = 0.0);
                v.iter_mut().for_each(|u| *u = 0.0);
                continue;
            }
            return Err(SolveError::NonFinite { iteration });
        }
        restarts_in_a_row = 0;
        axpy(alpha, y, x);
        let s_norm = axpy_norm2(alpha, v, r).sqrt() / b_norm; // r now holds s
        if !s_norm.is_finite() {
            return Err(SolveError::NonFinite { iteration });
        }
        let converged = if s_norm <= tol {
            true
        } else {
            precondition(r, y);
            apply(y, t);
            let (ts, tt) = dot2(t, r);
            omega = if tt > 0.0 { ts / tt } else { 0.0 };
            if !omega.is_finite() {
                return Err(SolveError::NonFinite { iteration });
            }
            axpy(omega, y, x);
            let (r2, r0r) = axpy_norm2_dot(omega, t, r, r0);
            relative = r2.sqrt() / b_norm;
            next_rho = Some(r0r);
            if !relative.is_finite() {
                return Err(SolveError::NonFinite { iteration });
            }
            relative <= tol
        };
        if converged {
            // Confirm with the true residual; restart from it if the recursion drifted.
            next_rho = None;
            relative = true_residual(x, r);
            history.push(relative);
            if !relative.is_finite() {
                return Err(SolveError::NonFinite { iteration });
            }
            if relative <= tol {
                return Ok(SolveInfo {
                    iterations: iteration,
                    relative_residual: relative,
                    residual_history: history,
                });
            }
            r0.copy_from_slice(r);
            (rho, alpha, omega) = (1.0, 1.0, 1.0);
            p.iter_mut().for_each(|u| *u = 0.0);
            v.iter_mut().for_each(|u| *u = 0.0);
        } else {
            history.push(relative);
        }
    }
    let relative = true_residual(x, r);
    if !relative.is_finite() {
        return Err(SolveError::NonFinite { iteration });
    }
    Err(no_convergence(iteration, relative, history))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Tridiagonal nonsymmetric (convection–diffusion-like) matrix, Jacobi preconditioner.
    fn tridiagonal(n: usize) -> impl Fn(&[f64], &mut [f64]) {
        move |x: &[f64], y: &mut [f64]| {
            for i in 0..n {
                let left = if i > 0 { x[i - 1] } else { 0.0 };
                let right = if i + 1 < n { x[i + 1] } else { 0.0 };
                y[i] = 2.5 * x[i] - 1.6 * left - 0.4 * right;
            }
        }
    }

    #[test]
    fn converges_on_a_nonsymmetric_system_and_reports_true_residual() {
        let n = 200;
        let a = tridiagonal(n);
        let b: Vec<f64> = (0..n).map(|i| ((i * 7) % 11) as f64 - 5.0).collect();
        let mut x = vec![0.0; n];
        let info = bicgstab(
            &a,
            |r, z| z.iter_mut().zip(r).for_each(|(z, r)| *z = r / 2.5),
            &b,
            &mut x,
            &KrylovParams::default(),
        )
        .expect("converges");
        let mut ax = vec![0.0; n];
        a(&x, &mut ax);
        let res = ax.iter().zip(&b).map(|(u, v)| (u - v).powi(2)).sum::<f64>().sqrt() / norm(&b);
        assert!(res <= 1e-8, "true residual {res}");
        assert!((res - info.relative_residual).abs() < 1e-12);
        assert_eq!(info.residual_history.len(), info.iterations + 1);
    }

    /// Work vectors left over from another solve (other size, other values) change nothing, bit for bit.
    #[test]
    fn reused_work_gives_the_fresh_result() {
        let n = 150;
        let a = tridiagonal(n);
        let jacobi = |r: &[f64], z: &mut [f64]| z.iter_mut().zip(r).for_each(|(z, r)| *z = r / 2.5);
        let b: Vec<f64> = (0..n).map(|i| (i as f64 * 0.3).sin()).collect();
        let mut fresh = vec![0.1; n];
        let fresh_info = bicgstab(&a, jacobi, &b, &mut fresh, &KrylovParams::default()).expect("converges");
        let mut work = BicgstabWork::new(n + 7);
        let other: Vec<f64> = (0..n + 7).map(|i| i as f64).collect();
        let mut scratch = vec![0.0; n + 7];
        let _ = bicgstab_with_work(
            tridiagonal(n + 7),
            jacobi,
            &other,
            &mut scratch,
            &KrylovParams::default(),
            &mut work,
        );
        let mut reused = vec![0.1; n];
        let info = bicgstab_with_work(&a, jacobi, &b, &mut reused, &KrylovParams::default(), &mut work)
            .expect("converges");
        assert_eq!(info, fresh_info);
        assert!(reused.iter().zip(&fresh).all(|(u, v)| u.to_bits() == v.to_bits()));
    }

    #[test]
    fn zero_rhs_returns_zero_and_nan_is_reported() {
        let n = 10;
        let mut x = vec![1.0; n];
        let info = bicgstab(
            tridiagonal(n),
            |r, z| z.copy_from_slice(r),
            &vec![0.0; n],
            &mut x,
            &KrylovParams::default(),
        )
        .expect("zero rhs");
        assert_eq!(info.iterations, 0);
        assert!(x.iter().all(|&v| v == 0.0));
        let mut b = vec![1.0; n];
        b[3] = f64::NAN;
        let err = bicgstab(tridiagonal(n), |r, z| z.copy_from_slice(r), &b, &mut x, &KrylovParams::default());
        assert!(matches!(err, Err(SolveError::NonFinite { iteration: 0 })));
        let err = bicgstab(
            tridiagonal(n),
            |_, z| z.iter_mut().for_each(|v| *v = f64::INFINITY),
            &vec![1.0; n],
            &mut vec![0.0; n],
            &KrylovParams::default(),
        );
        assert!(matches!(err, Err(SolveError::NonFinite { .. })), "{err:?}");
    }
}
