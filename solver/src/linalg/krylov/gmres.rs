//! Restarted flexible GMRES (Saad 1993, SIAM J. Sci. Comput. 14, 461–469, from memory).
//!
//! Right preconditioning keeps the true residual `‖b − A x‖` as the monitored quantity. The preconditioned
//! vectors `z_j = M⁻¹ v_j` are stored and the update is `Z y`, so the method stays exact when the preconditioner
//! is not a fixed linear map (f32 multigrid cycles that normalise their input are not quite one: in a nearly
//! singular system the plain-GMRES update `M⁻¹(V y)` can lose the residual at a restart). Each restart
//! recomputes the true residual.

use super::super::vector::{axpy, divide, dot, norm};
use super::{KrylovParams, LinearOperator, SolveError, SolveInfo};

/// Parameters of one GMRES solve.
#[derive(Clone, Debug, PartialEq)]
pub struct GmresParams {
    pub krylov: KrylovParams,
    /// Arnoldi basis size per restart cycle (default 30); the method keeps `2 × restart` vectors.
    pub restart: usize,
}

impl Default for GmresParams {
    fn default() -> Self {
        GmresParams { krylov: KrylovParams::default(), restart: 30 }
    }
}

/// Solves `A x = b` from the initial guess in `x`.
pub fn gmres(
    a: &impl LinearOperator,
    mut precondition: impl FnMut(&[f64], &mut [f64]),
    b: &[f64],
    x: &mut [f64],
    params: &GmresParams,
) -> Result<SolveInfo, SolveError> {
    let n = b.len();
    assert_eq!(x.len(), n, "gmres: x and b differ in length");
    let restart = params.restart.max(1);
    let KrylovParams { relative_tolerance: tol, max_iterations } = params.krylov;
    let b_norm = norm(b);
    if !b_norm.is_finite() {
        return Err(SolveError::NonFinite { iteration: 0 });
    }
    if b_norm == 0.0 {
        x.iter_mut().for_each(|v| *v = 0.0);
        return Ok(SolveInfo::zero_right_hand_side());
    }
    let mut r = vec![0.0; n];
    let mut z = vec![0.0; n];
    let mut w = vec![0.0; n];
    let mut basis: Vec<Vec<f64>> = Vec::with_capacity(restart + 1);
    let mut preconditioned: Vec<Vec<f64>> = Vec::with_capacity(restart);
    let mut history = Vec::new();
    let mut iterations = 0;
    loop {
        a.apply(x, &mut r);
        super::RightHandSide::Dense(b).residual_from_product(&mut r);
        let beta = norm(&r);
        let relative = beta / b_norm;
        if !relative.is_finite() {
            return Err(SolveError::NonFinite { iteration: iterations });
        }
        if history.last() != Some(&relative) {
            history.push(relative);
        }
        if relative <= tol {
            return Ok(SolveInfo { iterations, relative_residual: relative, residual_history: history });
        }
        if iterations >= max_iterations {
            return Err(SolveError::NoConvergence {
                iterations,
                relative_residual: relative,
                residual_history: history,
            });
        }
        // Arnoldi with modified Gram–Schmidt; Givens rotations reduce the Hessenberg matrix.
        basis.truncate(0);
        preconditioned.truncate(0);
        let mut v0 = r.clone();
        divide(&mut v0, beta);
        basis.push(v0);
        let mut hess: Vec<Vec<f64>> = Vec::new();
        let mut cs: Vec<f64> = Vec::new();
        let mut sn: Vec<f64> = Vec::new();
        let mut g = vec![beta];
        let mut steps = 0;
        while steps < restart && iterations < max_iterations {
            precondition(&basis[steps], &mut z);
            a.apply(&z, &mut w);
            preconditioned.push(z.clone());
            let mut column = vec![0.0; steps + 2];
            for (i, v) in basis.iter().enumerate() {
                let hij = dot(&w, v);
                column[i] = hij;
                axpy(-hij, v, &mut w);
            }
            let wn = norm(&w);
            column[steps + 1] = wn;
            for i in 0..steps {
                let (a, bb) = (column[i], column[i + 1]);
                column[i] = cs[i] * a + sn[i] * bb;
                column[i + 1] = -sn[i] * a + cs[i] * bb;
            }
            let (a, bb) = (column[steps], column[steps + 1]);
            let rho = a.hypot(bb);
            let (c, s) = if rho == 0.0 { (1.0, 0.0) } else { (a / rho, bb / rho) };
            cs.push(c);
            sn.push(s);
            column[steps] = rho;
            column[steps + 1] = 0.0;
            let gk = g[steps];
            g[steps] = c * gk;
            g.push(-s * gk);
            hess.push(column);
            steps += 1;
            iterations += 1;
            let estimate = g[steps].abs() / b_norm;
            if !estimate.is_finite() {
                return Err(SolveError::NonFinite { iteration: iterations });
            }
            history.push(estimate);
            if estimate <= tol || wn == 0.0 {
                break;
            }
            let mut next = w.clone();
            divide(&mut next, wn);
            basis.push(next);
        }
        // Back substitution for y, then x += Z y.
        let mut y = vec![0.0; steps];
        for i in (0..steps).rev() {
            let mut s = g[i];
            for (j, yj) in y.iter().enumerate().take(steps).skip(i + 1) {
                s -= hess[j][i] * yj;
            }
            y[i] = if hess[i][i] != 0.0 { s / hess[i][i] } else { 0.0 };
        }
        for (yi, zi) in y.iter().zip(&preconditioned) {
            axpy(*yi, zi, x);
        }
        // The loop head recomputes the true residual (and records it).
        history.pop();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A nonsymmetric tridiagonal system with Jacobi preconditioning: converges, and the reported residual is
    /// the true one.
    #[test]
    fn solves_a_nonsymmetric_system() {
        let n = 200;
        let a = |x: &[f64], y: &mut [f64]| {
            for i in 0..n {
                let left = if i > 0 { x[i - 1] } else { 0.0 };
                let right = if i + 1 < n { x[i + 1] } else { 0.0 };
                y[i] = 3.0 * x[i] - 1.5 * left - 0.5 * right;
            }
        };
        let b: Vec<f64> = (0..n).map(|i| ((i * 7) % 11) as f64 - 5.0).collect();
        let mut x = vec![0.0; n];
        let params = GmresParams {
            krylov: KrylovParams { relative_tolerance: 1e-10, max_iterations: 500 },
            restart: 20,
        };
        let jacobi = |r: &[f64], z: &mut [f64]| z.iter_mut().zip(r).for_each(|(z, r)| *z = r / 3.0);
        let info = gmres(&a, jacobi, &b, &mut x, &params).expect("converges");
        let mut y = vec![0.0; n];
        a(&x, &mut y);
        let true_res = y.iter().zip(&b).map(|(a, b)| (a - b).powi(2)).sum::<f64>().sqrt() / norm(&b);
        assert!(true_res <= 1e-10, "true residual {true_res}");
        assert!((true_res - info.relative_residual).abs() < 1e-14);
    }

    #[test]
    fn reports_no_convergence_with_history() {
        let b = vec![1.0; 50];
        let mut x = vec![0.0; 50];
        let a = |x: &[f64], y: &mut [f64]| {
            for i in 0..x.len() {
                y[i] = (i as f64 + 1.0) * x[i];
            }
        };
        let params = GmresParams {
            krylov: KrylovParams { relative_tolerance: 1e-12, max_iterations: 3 },
            restart: 10,
        };
        match gmres(&a, |r: &[f64], z: &mut [f64]| z.copy_from_slice(r), &b, &mut x, &params) {
            Err(SolveError::NoConvergence { iterations, relative_residual, residual_history }) => {
                assert_eq!(iterations, 3);
                assert!(residual_history.len() >= 2);
                assert!(relative_residual > 1e-12 && relative_residual < 1.0);
            }
            other => panic!("expected NoConvergence, got {other:?}"),
        }
    }
}
