//! Right-preconditioned BiCGSTAB (van der Vorst 1992, SIAM J. Sci. Stat. Comput. 13, 631–644, Alg. "BiCGSTAB"
//! with preconditioning on the right, from memory) for nonsymmetric `A x = b`:
//!
//! ```text
//! p ← r + β (p − ω v);  y = M⁻¹p;  v = A y;  α = ρ/(r̂·v);  x += α y;  s = r − α v
//! y = M⁻¹s;  t = A y;  ω = (t·s)/(t·t);  x += ω y;  r = s − ω t;  β = (ρ_new/ρ)(α/ω)
//! ```
//!
//! With right preconditioning the recursively updated residual is the residual of the *unpreconditioned*
//! system, so the stopping test `‖b − A x‖ / ‖b‖ ≤ tol` is the user's; it is confirmed with the true residual
//! before returning, and the iteration restarts from the true residual if the two drifted apart.
//!
//! The shadow vector r̂ is the caller's choice ([`Shadow`]): the stored initial residual (the usual choice), or
//! no stored vector at all, for systems where every vector is expensive (the coupled flow system).

use super::super::real::Real;
use super::super::vector::{
    axpy, axpy_norm2, axpy_norm2_dot, chunked_sum, dot, dot2, norm, update_direction, zero,
};
use super::{KrylovParams, LinearOperator, RightHandSide, SolveError, SolveInfo};

/// Which shadow vector r̂ the iteration uses.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum Shadow {
    /// The initial residual, stored (one more work vector); after a breakdown, the residual of that moment.
    #[default]
    InitialResidual,
    /// Nothing stored: `b` when the iteration starts from zero (so `b = r₀`, and a sparse `b` makes its dot
    /// products run over its nonzeros); from a nonzero start, and after a breakdown, a fixed pseudo-random
    /// vector generated on the fly (as in IDR(s) methods, common practice).
    Unstored,
}

/// Parameters of one BiCGSTAB solve.
#[derive(Clone, Debug, PartialEq, Default)]
pub struct BicgstabParams {
    pub krylov: KrylovParams,
    pub shadow: Shadow,
}

/// The work vectors of BiCGSTAB (five, six with a stored shadow), kept by callers that solve many systems of one
/// size (time steps): allocating them afresh costs a page fault per 4 KiB on first touch. The result does not
/// depend on what they held before. f64 by default; f32 for an inner solve of [`super::refine_until`].
pub struct BicgstabWork<T = f64> {
    r: Vec<T>,
    r0: Vec<T>,
    p: Vec<T>,
    v: Vec<T>,
    y: Vec<T>,
    t: Vec<T>,
}

impl<T> Default for BicgstabWork<T> {
    fn default() -> Self {
        BicgstabWork {
            r: Vec::new(),
            r0: Vec::new(),
            p: Vec::new(),
            v: Vec::new(),
            y: Vec::new(),
            t: Vec::new(),
        }
    }
}

impl<T: Real> BicgstabWork<T> {
    /// Work vectors for systems of `n` unknowns with a stored shadow.
    pub fn new(n: usize) -> Self {
        let mut work = BicgstabWork::default();
        work.resize(n, Shadow::InitialResidual);
        work
    }

    /// Work vectors in the given buffers (up to six, taken in order; what they hold does not matter): a caller
    /// that has just dropped arrays of about the system's size lends their memory instead of touching new pages.
    pub fn from_buffers(buffers: impl IntoIterator<Item = Vec<T>>) -> Self {
        let mut work = BicgstabWork::default();
        let slots = [&mut work.r, &mut work.p, &mut work.v, &mut work.y, &mut work.t, &mut work.r0];
        for (slot, mut buffer) in slots.into_iter().zip(buffers) {
            buffer.clear();
            *slot = buffer;
        }
        work
    }

    /// Bytes held.
    pub fn memory_bytes(&self) -> usize {
        let vectors = [&self.r, &self.r0, &self.p, &self.v, &self.y, &self.t];
        vectors.iter().map(|v| v.capacity()).sum::<usize>() * std::mem::size_of::<T>()
    }

    fn resize(&mut self, n: usize, shadow: Shadow) {
        for v in [&mut self.r, &mut self.p, &mut self.v, &mut self.y, &mut self.t] {
            v.resize(n, T::ZERO);
        }
        match shadow {
            Shadow::InitialResidual => self.r0.resize(n, T::ZERO),
            Shadow::Unstored => self.r0 = Vec::new(),
        }
    }
}

/// The shadow vector during the iteration.
enum ShadowVector {
    /// `work.r0`.
    Stored,
    /// `b` itself.
    RightHandSide,
    /// [`hashed`] entries.
    Hashed,
}

/// Entry `i` of the pseudo-random shadow, uniform in [−1, 1) (SplitMix64 finaliser of i).
#[inline]
fn hashed(i: usize) -> f64 {
    let mut z = (i as u64).wrapping_add(0x9e37_79b9_7f4a_7c15);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 52) as f64 - 1.0
}

impl ShadowVector {
    fn dot<T: Real>(&self, r0: &[T], b: &RightHandSide<'_, T>, v: &[T]) -> f64 {
        match self {
            ShadowVector::Stored => dot(r0, v),
            ShadowVector::RightHandSide => b.dot(v),
            ShadowVector::Hashed => {
                chunked_sum(v.len(), |range| range.map(|i| hashed(i) * v[i].to_f64()).sum())
            }
        }
    }
}

/// Solves `A x = b` from the initial guess in `x` on the caller's work vectors (resized to `b.len()` if
/// needed). `precondition(r, z)` sets `z ≈ A⁻¹ r` (one multigrid cycle here). The vectors are f64 or f32; the
/// scalars and every sum are f64.
pub fn bicgstab<T: Real>(
    a: &impl LinearOperator<T>,
    precondition: impl FnMut(&[T], &mut [T]),
    b: RightHandSide<'_, T>,
    x: &mut [T],
    params: &BicgstabParams,
    work: &mut BicgstabWork<T>,
) -> Result<SolveInfo, SolveError> {
    bicgstab_until(a, precondition, b, x, params, work, |_, _| 0.0)
}

/// [`bicgstab`] with a further stopping criterion: once the relative residual meets the tolerance,
/// `unmet(x, r)` (r = b − A x, the true residual) says how far that criterion is from being met; a value ≤ 1
/// stops, a value q > 1 lowers the residual target to `relative/(2q)` and the iteration goes on (its directions
/// kept after a full step). Running out of iterations is `NoConvergence` as usual, with the residual reached.
pub fn bicgstab_until<T: Real>(
    a: &impl LinearOperator<T>,
    mut precondition: impl FnMut(&[T], &mut [T]),
    b: RightHandSide<'_, T>,
    x: &mut [T],
    params: &BicgstabParams,
    work: &mut BicgstabWork<T>,
    mut unmet: impl FnMut(&[T], &[T]) -> f64,
) -> Result<SolveInfo, SolveError> {
    let n = b.len();
    assert_eq!(x.len(), n, "bicgstab: x and b differ in length");
    let b_norm = b.norm();
    if !b_norm.is_finite() {
        return Err(SolveError::NonFinite { iteration: 0 });
    }
    if b_norm == 0.0 {
        x.iter_mut().for_each(|v| *v = T::ZERO);
        return Ok(SolveInfo::zero_right_hand_side());
    }
    let mut tol = params.krylov.relative_tolerance;
    let mut shadow = match params.shadow {
        Shadow::InitialResidual => ShadowVector::Stored,
        Shadow::Unstored if x.iter().all(|&v| v == T::ZERO) => ShadowVector::RightHandSide,
        Shadow::Unstored => ShadowVector::Hashed,
    };
    work.resize(n, params.shadow);
    let BicgstabWork { r, r0, p, v, y, t } = work;
    let (r, r0, p, v, y, t) = (&mut r[..], &mut r0[..], &mut p[..], &mut v[..], &mut y[..], &mut t[..]);
    let true_residual = |x: &[T], r: &mut [T]| -> f64 {
        a.apply(x, r);
        b.residual_from_product(r);
        norm(r) / b_norm
    };
    let mut relative = true_residual(x, r);
    if !relative.is_finite() {
        return Err(SolveError::NonFinite { iteration: 0 });
    }
    let mut history = vec![relative];
    if relative <= tol {
        let q = unmet(x, r);
        if q <= 1.0 {
            return Ok(SolveInfo { iterations: 0, relative_residual: relative, residual_history: history });
        }
        tol = relative / (2.0 * q);
    }
    // A fresh start from the current residual r: new shadow, zero directions.
    let restart = |shadow: &mut ShadowVector, r0: &mut [T], r: &[T], p: &mut [T], v: &mut [T]| {
        match shadow {
            ShadowVector::Stored => r0.copy_from_slice(r),
            _ => *shadow = ShadowVector::Hashed,
        }
        zero(p);
        zero(v);
    };
    if let ShadowVector::Stored = shadow {
        r0.copy_from_slice(r);
    }
    zero(p);
    zero(v);
    let (mut rho, mut alpha, mut omega) = (1.0, 1.0, 1.0);
    let mut iteration = 0;
    let mut restarts_in_a_row = 0;
    // r̂·r of the next iteration, when the last residual update computed it on the way (fused pass).
    let mut next_rho: Option<f64> = None;
    let no_convergence = |iterations: usize, relative: f64, history: Vec<f64>| SolveError::NoConvergence {
        iterations,
        relative_residual: relative,
        residual_history: history,
    };
    while iteration < params.krylov.max_iterations {
        iteration += 1;
        let rho_new = next_rho.take().unwrap_or_else(|| shadow.dot(r0, &b, r));
        if !rho_new.is_finite() {
            return Err(SolveError::NonFinite { iteration });
        }
        // Breakdown (r̂·r = 0, ω = 0 or r̂·v = 0): restart from the current residual with a new shadow vector.
        let breakdown = if rho_new == 0.0 || (iteration > 1 && omega == 0.0) {
            true
        } else {
            let beta = (rho_new / rho) * (alpha / omega);
            rho = rho_new;
            update_direction(beta, omega, r, v, p);
            precondition(p, y);
            a.apply(y, v);
            let r0v = shadow.dot(r0, &b, v);
            alpha = rho / r0v;
            if !alpha.is_finite() && r0v != 0.0 {
                return Err(SolveError::NonFinite { iteration });
            }
            !alpha.is_finite()
        };
        if breakdown {
            restarts_in_a_row += 1;
            if restarts_in_a_row > 3 {
                return Err(no_convergence(iteration, relative, history));
            }
            restart(&mut shadow, r0, r, p, v);
            (rho, alpha, omega) = (1.0, 1.0, 1.0);
            iteration -= 1;
            continue;
        }
        restarts_in_a_row = 0;
        axpy(alpha, y, x);
        let s_norm = axpy_norm2(alpha, v, r).sqrt() / b_norm; // r now holds s
        if !s_norm.is_finite() {
            return Err(SolveError::NonFinite { iteration });
        }
        let half_step = s_norm <= tol;
        let converged = if half_step {
            true
        } else {
            precondition(r, y);
            a.apply(y, t);
            let (ts, tt) = dot2(t, r);
            omega = if tt > 0.0 { ts / tt } else { 0.0 };
            if !omega.is_finite() {
                return Err(SolveError::NonFinite { iteration });
            }
            axpy(omega, y, x);
            let r2 = match shadow {
                ShadowVector::Stored => {
                    let (r2, r0r) = axpy_norm2_dot(omega, t, r, r0);
                    next_rho = Some(r0r);
                    r2
                }
                _ => axpy_norm2(omega, t, r),
            };
            relative = r2.sqrt() / b_norm;
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
                let q = unmet(x, r);
                if q <= 1.0 {
                    return Ok(SolveInfo {
                        iterations: iteration,
                        relative_residual: relative,
                        residual_history: history,
                    });
                }
                tol = relative / (2.0 * q);
                if !half_step {
                    // r is the true residual of a full step: the directions still fit it.
                    continue;
                }
            }
            restart(&mut shadow, r0, r, p, v);
            (rho, alpha, omega) = (1.0, 1.0, 1.0);
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
    use super::super::SparseVector;
    use super::*;

    /// Tridiagonal nonsymmetric (convection–diffusion-like) matrix.
    fn tridiagonal(n: usize) -> impl Fn(&[f64], &mut [f64]) {
        move |x: &[f64], y: &mut [f64]| {
            for i in 0..n {
                let left = if i > 0 { x[i - 1] } else { 0.0 };
                let right = if i + 1 < n { x[i + 1] } else { 0.0 };
                y[i] = 2.5 * x[i] - 1.6 * left - 0.4 * right;
            }
        }
    }

    fn jacobi(r: &[f64], z: &mut [f64]) {
        z.iter_mut().zip(r).for_each(|(z, r)| *z = r / 2.5);
    }

    fn true_relative_residual(a: &impl LinearOperator, b: &[f64], x: &[f64]) -> f64 {
        let mut ax = vec![0.0; b.len()];
        a.apply(x, &mut ax);
        ax.iter().zip(b).map(|(u, v)| (u - v).powi(2)).sum::<f64>().sqrt() / norm(b)
    }

    /// Both shadow choices, dense and sparse right-hand sides, zero and nonzero starts: converged, and the
    /// reported residual is the true one.
    #[test]
    fn converges_with_every_shadow_and_right_hand_side() {
        let n = 300;
        let a = tridiagonal(n);
        let dense: Vec<f64> = (0..n).map(|i| ((i * 7) % 11) as f64 - 5.0).collect();
        let sparse = SparseVector { len: n, entries: vec![(0, 1.0), (17, -2.0), (299, 0.5)] };
        let sparse_dense = sparse.to_dense();
        let cases = [(RightHandSide::Dense(&dense), &dense), (RightHandSide::Sparse(&sparse), &sparse_dense)];
        for shadow in [Shadow::InitialResidual, Shadow::Unstored] {
            for &(rhs, b) in &cases {
                for start in [0.0, 0.3] {
                    let params = BicgstabParams {
                        krylov: KrylovParams { relative_tolerance: 1e-10, max_iterations: 500 },
                        shadow,
                    };
                    let mut x = vec![start; n];
                    let info = bicgstab(&a, jacobi, rhs, &mut x, &params, &mut BicgstabWork::default())
                        .expect("converges");
                    let res = true_relative_residual(&a, b, &x);
                    assert!(res <= 1e-10, "{shadow:?} start {start}: true residual {res}");
                    assert!((res - info.relative_residual).abs() < 1e-14);
                    assert_eq!(info.residual_history.len(), info.iterations + 1);
                }
            }
        }
    }

    /// Work vectors left over from another solve (other size, other values) change nothing, bit for bit.
    #[test]
    fn reused_work_gives_the_fresh_result() {
        let n = 150;
        let a = tridiagonal(n);
        let b: Vec<f64> = (0..n).map(|i| (i as f64 * 0.3).sin()).collect();
        let params = BicgstabParams::default();
        let mut fresh = vec![0.1; n];
        let fresh_info =
            bicgstab(&a, jacobi, RightHandSide::Dense(&b), &mut fresh, &params, &mut BicgstabWork::default())
                .expect("converges");
        let mut work = BicgstabWork::new(n + 7);
        let other: Vec<f64> = (0..n + 7).map(|i| i as f64).collect();
        let mut scratch = vec![0.0; n + 7];
        let _ = bicgstab(
            &tridiagonal(n + 7),
            jacobi,
            RightHandSide::Dense(&other),
            &mut scratch,
            &params,
            &mut work,
        );
        let mut reused = vec![0.1; n];
        let info = bicgstab(&a, jacobi, RightHandSide::Dense(&b), &mut reused, &params, &mut work)
            .expect("converges");
        assert_eq!(info, fresh_info);
        assert!(reused.iter().zip(&fresh).all(|(u, v)| u.to_bits() == v.to_bits()));
    }

    #[test]
    fn reports_no_convergence_with_the_residual_it_stopped_at() {
        let n = 50;
        let b = vec![1.0; n];
        let a = |x: &[f64], y: &mut [f64]| {
            for i in 0..x.len() {
                y[i] = (i as f64 + 1.0) * x[i];
            }
        };
        for shadow in [Shadow::InitialResidual, Shadow::Unstored] {
            let params = BicgstabParams {
                krylov: KrylovParams { relative_tolerance: 1e-12, max_iterations: 3 },
                shadow,
            };
            let mut x = vec![0.0; n];
            let identity = |r: &[f64], z: &mut [f64]| z.copy_from_slice(r);
            match bicgstab(
                &a,
                identity,
                RightHandSide::Dense(&b),
                &mut x,
                &params,
                &mut BicgstabWork::default(),
            ) {
                Err(SolveError::NoConvergence { iterations, relative_residual, residual_history }) => {
                    assert_eq!(iterations, 3);
                    assert_eq!(residual_history.len(), 4);
                    let res = true_relative_residual(&a, &b, &x);
                    assert!((res - relative_residual).abs() < 1e-14 && res > 1e-12);
                }
                other => panic!("expected NoConvergence, got {other:?}"),
            }
        }
    }

    #[test]
    fn zero_rhs_returns_zero_and_nan_is_reported() {
        let n = 10;
        let params = BicgstabParams::default();
        let identity = |r: &[f64], z: &mut [f64]| z.copy_from_slice(r);
        let mut work = BicgstabWork::default();
        let mut x = vec![1.0; n];
        let zero_rhs = vec![0.0; n];
        let info =
            bicgstab(&tridiagonal(n), identity, RightHandSide::Dense(&zero_rhs), &mut x, &params, &mut work)
                .expect("zero rhs");
        assert_eq!(info.iterations, 0);
        assert!(x.iter().all(|&v| v == 0.0));
        let mut b = vec![1.0; n];
        b[3] = f64::NAN;
        let err = bicgstab(&tridiagonal(n), identity, RightHandSide::Dense(&b), &mut x, &params, &mut work);
        assert!(matches!(err, Err(SolveError::NonFinite { iteration: 0 })));
        let ones = vec![1.0; n];
        let err = bicgstab(
            &tridiagonal(n),
            |_: &[f64], z: &mut [f64]| z.iter_mut().for_each(|v| *v = f64::INFINITY),
            RightHandSide::Dense(&ones),
            &mut vec![0.0; n],
            &params,
            &mut work,
        );
        assert!(matches!(err, Err(SolveError::NonFinite { .. })), "{err:?}");
    }

    /// A further criterion (largest |r_i| below 1e-12 ‖b‖, far tighter than the 1e-6 tolerance) keeps the
    /// iteration going until it holds, for both shadow choices; without it the solve stops at the tolerance.
    #[test]
    fn further_criterion_keeps_iterating_until_met() {
        let n = 300;
        let a = tridiagonal(n);
        let b: Vec<f64> = (0..n).map(|i| ((i * 7) % 11) as f64 - 5.0).collect();
        let bound = 1e-12 * norm(&b);
        let params = |shadow| BicgstabParams {
            krylov: KrylovParams { relative_tolerance: 1e-6, max_iterations: 500 },
            shadow,
        };
        let largest = |r: &[f64]| r.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        for shadow in [Shadow::InitialResidual, Shadow::Unstored] {
            let mut x = vec![0.0; n];
            let plain = bicgstab(
                &a,
                jacobi,
                RightHandSide::Dense(&b),
                &mut x,
                &params(shadow),
                &mut BicgstabWork::default(),
            )
            .expect("converges");
            let mut r = vec![0.0; n];
            a.apply(&x, &mut r);
            assert!(
                r.iter().zip(&b).any(|(ax, bi)| (bi - ax).abs() > bound),
                "the criterion is not trivially met"
            );
            let mut x = vec![0.0; n];
            let mut asked = 0;
            let info = bicgstab_until(
                &a,
                jacobi,
                RightHandSide::Dense(&b),
                &mut x,
                &params(shadow),
                &mut BicgstabWork::default(),
                |_, r| {
                    asked += 1;
                    largest(r) / bound
                },
            )
            .expect("converges");
            a.apply(&x, &mut r);
            let worst = r.iter().zip(&b).fold(0.0f64, |m, (ax, bi)| m.max((bi - ax).abs()));
            assert!(worst <= bound, "{shadow:?}: largest residual {worst:e} above {bound:e}");
            assert!(asked >= 2 && info.iterations > plain.iterations, "{shadow:?}: {asked} checks, {info:?}");
            assert!((info.relative_residual - true_relative_residual(&a, &b, &x)).abs() < 1e-14);
        }
    }

    #[test]
    fn hashed_shadow_is_spread_over_minus_one_to_one() {
        let values: Vec<f64> = (0..10000).map(hashed).collect();
        assert!(values.iter().all(|v| (-1.0..1.0).contains(v)));
        let mean = values.iter().sum::<f64>() / values.len() as f64;
        assert!(mean.abs() < 0.05, "mean {mean}");
    }
}
