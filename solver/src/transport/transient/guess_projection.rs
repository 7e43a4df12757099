//! The starting guess of a step's linear solve: of all affine combinations of the last few solutions, the one
//! whose step residual is smallest — a minimal-residual projection on the solution history (after Fischer 1998,
//! Comput. Methods Appl. Mech. Engrg. 163, 193–204, "Projection techniques for iterative solution of Ax = b
//! with successive right-hand sides" [memory]; there for symmetric systems with an A-orthogonal basis, here in
//! the residual 2-norm, which is what the Krylov solve's stopping test measures).
//!
//! The guess is `x₀ = x_e + Σⱼ βⱼ (cⱼ − cⱼ₊₁)`, anchored at the polynomial extrapolation `x_e = Σᵢ eᵢ cᵢ`, with β
//! minimising `‖b − A x₀‖₂` over the m = K − 1 history differences. Anchoring keeps the least-squares problem
//! small and well scaled: late in an approach to steady state the solutions are nearly parallel, but their
//! differences are not, and the correction is small beside `x_e`, so round-off in β barely touches the guess.
//! Because `x_e` itself is one of the candidates, the guess's residual is never larger than the extrapolation's
//! (checked, and the extrapolation kept otherwise).
//!
//! Cost: one product per step, `A₀ cⁿ` with the step operator *without* its time-dependent diagonal (storage
//! σφh³ and far-field coefficients, `StepSolver::apply_base`), kept for K solutions; then `A cᵢ = A₀ cᵢ + d ⊙ cᵢ`
//! with `d` the diagonal difference, and one fused pass forms the anchor residual, the m×m Gram matrix and the
//! right-hand side. Reductions sum fixed chunks in a fixed order, so the guess — and with it a run resumed from a
//! checkpoint, which recomputes the products from the stored solutions with the same function — repeats the
//! uninterrupted run bit for bit.

// Small dense algebra on 3×3 arrays reads best with indices.
#![allow(clippy::needless_range_loop)]

use rayon::prelude::*;

/// Solutions used (cⁿ and the K − 1 before it).
pub const GUESS_HISTORY: usize = 4;
const MAX_DIFFERENCES: usize = GUESS_HISTORY - 1;
/// Grid cells per reduction chunk.
const CHUNK: usize = 8192;

/// Residuals of the anchor and of the projected guess (absolute 2-norms; the latter from the Gram matrix).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GuessResidual {
    pub anchor: f64,
    pub projected: f64,
}

/// Everything the projection reads.
pub struct HistorySpace<'a> {
    /// cⁿ, cⁿ⁻¹, … (at least two, at most [`GUESS_HISTORY`]).
    pub solutions: &'a [&'a [f64]],
    /// `A₀ cᵢ` for each solution.
    pub base_products: &'a [&'a [f64]],
    /// The step operator's diagonal and the base operator's: `A = A₀ + diag(step − base)`.
    pub step_diagonal: &'a [f64],
    pub base_diagonal: &'a [f64],
}

#[derive(Clone, Copy, Default)]
struct Sums {
    gram: [[f64; MAX_DIFFERENCES]; MAX_DIFFERENCES],
    projection: [f64; MAX_DIFFERENCES],
    anchor_squared: f64,
}

/// Writes the projected guess into `guess`, given the anchor weights `anchor[i]` of `solutions[i]` (summing to
/// one; missing entries are zero) and the step's right-hand side `b`.
pub fn projected_guess(space: &HistorySpace, anchor: &[f64], b: &[f64], guess: &mut [f64]) -> GuessResidual {
    let k = space.solutions.len().min(space.base_products.len()).min(GUESS_HISTORY);
    assert!(k >= 2, "the projection needs two solutions");
    assert!(anchor.len() <= k);
    let m = k - 1;
    let mut e = [0.0; GUESS_HISTORY];
    e[..anchor.len()].copy_from_slice(anchor);
    let n = b.len();

    let partial: Vec<Sums> = (0..n.div_ceil(CHUNK))
        .into_par_iter()
        .map(|chunk| {
            let mut s = Sums::default();
            let (lo, hi) = (chunk * CHUNK, ((chunk + 1) * CHUNK).min(n));
            let mut y = [0.0; GUESS_HISTORY];
            for p in lo..hi {
                let d = space.step_diagonal[p] - space.base_diagonal[p];
                let mut r = b[p];
                for i in 0..k {
                    y[i] = space.base_products[i][p] + d * space.solutions[i][p];
                    r -= e[i] * y[i];
                }
                s.anchor_squared += r * r;
                let mut z = [0.0; MAX_DIFFERENCES];
                for j in 0..m {
                    z[j] = y[j] - y[j + 1];
                    s.projection[j] += z[j] * r;
                }
                for j in 0..m {
                    for l in 0..=j {
                        s.gram[j][l] += z[j] * z[l];
                    }
                }
            }
            s
        })
        .collect();
    let mut total = Sums::default();
    for s in &partial {
        total.anchor_squared += s.anchor_squared;
        for j in 0..m {
            total.projection[j] += s.projection[j];
            for l in 0..=j {
                total.gram[j][l] += s.gram[j][l];
            }
        }
    }
    for j in 0..m {
        for l in 0..j {
            total.gram[l][j] = total.gram[j][l];
        }
    }

    let beta = least_squares(&total.gram, &total.projection, m);
    // ‖r_e − Zβ‖² = ‖r_e‖² − 2βᵀg + βᵀGβ.
    let mut projected_squared = total.anchor_squared;
    for j in 0..m {
        projected_squared -= 2.0 * beta[j] * total.projection[j];
        for l in 0..m {
            projected_squared += beta[j] * total.gram[j][l] * beta[l];
        }
    }
    let anchor_norm = total.anchor_squared.sqrt();
    let improved = projected_squared.is_finite() && projected_squared < total.anchor_squared;
    // Weight of cᵢ: eᵢ + βᵢ − βᵢ₋₁ (cᵢ enters difference i with + and difference i − 1 with −).
    let mut weights = e;
    if improved {
        for j in 0..m {
            weights[j] += beta[j];
            weights[j + 1] -= beta[j];
        }
    }
    let solutions = &space.solutions[..k];
    guess.par_chunks_mut(CHUNK).enumerate().for_each(|(chunk, g)| {
        let lo = chunk * CHUNK;
        for (q, value) in g.iter_mut().enumerate() {
            let p = lo + q;
            let mut v = 0.0;
            for i in 0..k {
                v += weights[i] * solutions[i][p];
            }
            *value = v;
        }
    });
    GuessResidual {
        anchor: anchor_norm,
        projected: if improved { projected_squared.max(0.0).sqrt() } else { anchor_norm },
    }
}

/// Solves `G β = g` (m ≤ 3, G symmetric positive semi-definite) by Cholesky on the diagonally scaled matrix;
/// a direction whose pivot falls below 1e-12 of its diagonal (a difference parallel to earlier ones, or zero)
/// is left out (β = 0).
fn least_squares(
    gram: &[[f64; MAX_DIFFERENCES]; MAX_DIFFERENCES],
    g: &[f64; MAX_DIFFERENCES],
    m: usize,
) -> [f64; MAX_DIFFERENCES] {
    let mut scale = [0.0; MAX_DIFFERENCES];
    for j in 0..m {
        scale[j] = if gram[j][j] > 0.0 { 1.0 / gram[j][j].sqrt() } else { 0.0 };
    }
    let mut a = [[0.0; MAX_DIFFERENCES]; MAX_DIFFERENCES];
    let mut rhs = [0.0; MAX_DIFFERENCES];
    for j in 0..m {
        rhs[j] = g[j] * scale[j];
        for l in 0..m {
            a[j][l] = gram[j][l] * scale[j] * scale[l];
        }
    }
    // Cholesky a = L Lᵀ with dropped directions.
    let mut l = [[0.0; MAX_DIFFERENCES]; MAX_DIFFERENCES];
    let mut kept = [false; MAX_DIFFERENCES];
    for j in 0..m {
        if scale[j] == 0.0 {
            continue;
        }
        let mut pivot = a[j][j];
        for q in 0..j {
            pivot -= l[j][q] * l[j][q];
        }
        if pivot.is_nan() || pivot <= 1e-12 {
            continue;
        }
        kept[j] = true;
        l[j][j] = pivot.sqrt();
        for i in j + 1..m {
            let mut v = a[i][j];
            for q in 0..j {
                v -= l[i][q] * l[j][q];
            }
            l[i][j] = v / l[j][j];
        }
    }
    // Forward and back substitution over the kept directions.
    let mut w = [0.0; MAX_DIFFERENCES];
    for j in 0..m {
        if kept[j] {
            let mut v = rhs[j];
            for q in 0..j {
                v -= l[j][q] * w[q];
            }
            w[j] = v / l[j][j];
        }
    }
    let mut beta = [0.0; MAX_DIFFERENCES];
    for j in (0..m).rev() {
        if kept[j] {
            let mut v = w[j];
            for q in j + 1..m {
                v -= l[q][j] * beta[q];
            }
            beta[j] = v / l[j][j];
        }
    }
    for j in 0..m {
        beta[j] *= scale[j];
    }
    beta
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A small nonsymmetric operator: tridiagonal base plus a diagonal shift.
    fn apply(base_diag: &[f64], x: &[f64], y: &mut [f64]) {
        let n = x.len();
        for i in 0..n {
            let left = if i > 0 { x[i - 1] } else { 0.0 };
            let right = if i + 1 < n { x[i + 1] } else { 0.0 };
            y[i] = base_diag[i] * x[i] - 0.9 * left - 0.3 * right;
        }
    }

    /// The projected guess for history `sols` of the operator with diagonal `base` (A₀) and `step` (A).
    fn projected(
        base: &[f64],
        step: &[f64],
        sols: &[Vec<f64>],
        anchor: &[f64],
        b: &[f64],
        guess: &mut [f64],
    ) -> GuessResidual {
        let products: Vec<Vec<f64>> = sols
            .iter()
            .map(|c| {
                let mut y = vec![0.0; c.len()];
                apply(base, c, &mut y);
                y
            })
            .collect();
        let sol_refs: Vec<&[f64]> = sols.iter().map(|v| v.as_slice()).collect();
        let prod_refs: Vec<&[f64]> = products.iter().map(|v| v.as_slice()).collect();
        let space = HistorySpace {
            solutions: &sol_refs,
            base_products: &prod_refs,
            step_diagonal: step,
            base_diagonal: base,
        };
        projected_guess(&space, anchor, b, guess)
    }

    fn residual(step_diag: &[f64], b: &[f64], x: &[f64]) -> f64 {
        let mut y = vec![0.0; x.len()];
        apply(step_diag, x, &mut y);
        y.iter().zip(b).map(|(u, v)| (u - v).powi(2)).sum::<f64>().sqrt()
    }

    /// When the new solution is an affine combination of the history, the guess is that solution (residual at
    /// round-off), and the reported residuals are the true ones.
    #[test]
    fn recovers_a_solution_in_the_history_span() {
        let n = 3 * CHUNK + 17;
        let base: Vec<f64> = (0..n).map(|i| 2.0 + (i as f64 * 0.01).sin().abs()).collect();
        let step: Vec<f64> = base.iter().enumerate().map(|(i, d)| d + 0.5 + 0.1 * ((i % 7) as f64)).collect();
        let modes: Vec<Vec<f64>> =
            (0..3).map(|q| (0..n).map(|i| ((q + 1) as f64 * i as f64 * 1e-3).cos()).collect()).collect();
        // c_i = m0 + a_i m1 + b_i m2 at four "times"; the exact solution at the next time is in their affine hull.
        let coef = [(0.9, 0.3), (0.7, 0.5), (0.4, 0.45), (0.2, 0.2)];
        let sols: Vec<Vec<f64>> = coef
            .iter()
            .map(|(a, c)| (0..n).map(|i| modes[0][i] + a * modes[1][i] + c * modes[2][i]).collect())
            .collect();
        let exact: Vec<f64> = (0..n).map(|i| modes[0][i] + 1.1 * modes[1][i] + 0.1 * modes[2][i]).collect();
        let mut b = vec![0.0; n];
        apply(&step, &exact, &mut b);
        let guess_for = |anchor: &[f64], guess: &mut [f64]| projected(&base, &step, &sols, anchor, &b, guess);
        let anchor = [3.0, -3.0, 1.0];
        let mut guess = vec![0.0; n];
        let report = guess_for(&anchor, &mut guess);
        let anchor_x: Vec<f64> =
            (0..n).map(|i| anchor.iter().zip(&sols).map(|(w, c)| w * c[i]).sum()).collect();
        let true_anchor = residual(&step, &b, &anchor_x);
        assert!((report.anchor - true_anchor).abs() <= 1e-10 * true_anchor, "{report:?} vs {true_anchor}");
        let true_guess = residual(&step, &b, &guess);
        let b_norm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
        assert!(true_anchor > 1e-2 * b_norm, "the anchor alone is a poor guess here: {true_anchor}");
        assert!(true_guess <= 1e-9 * b_norm, "projected guess residual {true_guess}");
        let err = guess.iter().zip(&exact).map(|(u, v)| (u - v).abs()).fold(0.0, f64::max);
        assert!(err < 1e-8, "guess error {err}");
    }

    /// Outside the span the guess is the least-squares optimum: no other affine combination does better, and
    /// never worse than the anchor; repeated history entries (collinear differences) are handled.
    #[test]
    fn never_worse_than_the_anchor_and_locally_optimal() {
        let n = 1000;
        let base: Vec<f64> = vec![2.5; n];
        let step: Vec<f64> = vec![3.0; n];
        let b: Vec<f64> = (0..n).map(|i| ((i * 13) % 17) as f64 - 8.0).collect();
        let c0: Vec<f64> = (0..n).map(|i| (i as f64 * 0.05).sin()).collect();
        let c1: Vec<f64> = (0..n).map(|i| (i as f64 * 0.07).cos()).collect();
        let sols = vec![c0.clone(), c1.clone(), c1.clone(), c0.clone()];
        let guess_for = |anchor: &[f64], guess: &mut [f64]| projected(&base, &step, &sols, anchor, &b, guess);
        let mut guess = vec![0.0; n];
        let report = guess_for(&[2.0, -1.0], &mut guess);
        assert!(report.projected <= report.anchor);
        let at = |t: f64| -> f64 {
            let x: Vec<f64> = (0..n).map(|i| (1.0 - t) * c0[i] + t * c1[i]).collect();
            residual(&step, &b, &x)
        };
        let best = residual(&step, &b, &guess);
        assert!((best - report.projected).abs() <= 1e-9 * best.max(1.0));
        // The guess is x = (1 − t*) c0 + t* c1; moving t either way raises the residual.
        let t_star = (guess[1] - c0[1]) / (c1[1] - c0[1]);
        for dt in [-1e-3, 1e-3] {
            assert!(at(t_star + dt) > best, "t* = {t_star}: {} vs {best}", at(t_star + dt));
        }
    }
}
