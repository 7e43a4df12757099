//! Dense LU factorisation with partial pivoting, `P A = L U`, for the coarsest multigrid level (≲ 1000 rows).
//!
//! A zero pivot (a singular coarse operator, e.g. pure Neumann diffusion) sets that unknown's correction to zero
//! instead of dividing by zero: for a consistent right-hand side this yields one of the solutions.

/// LU factors of a square matrix, row-major, L unit lower triangular (below the diagonal) and U above.
#[derive(Clone, Debug)]
pub(crate) struct DenseLu {
    n: usize,
    factors: Vec<f64>,
    pivots: Vec<usize>,
    /// Pivots smaller than this are treated as zero.
    tiny: f64,
}

impl DenseLu {
    /// Factorises the row-major n×n matrix `a`.
    pub fn factorise(n: usize, mut a: Vec<f64>) -> Self {
        assert_eq!(a.len(), n * n);
        let scale = a.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let tiny = scale * 1e-13;
        let mut pivots = vec![0; n];
        for col in 0..n {
            let (mut best, mut best_abs) = (col, a[col * n + col].abs());
            for row in col + 1..n {
                let v = a[row * n + col].abs();
                if v > best_abs {
                    best = row;
                    best_abs = v;
                }
            }
            pivots[col] = best;
            if best != col {
                for c in 0..n {
                    a.swap(col * n + c, best * n + c);
                }
            }
            let pivot = a[col * n + col];
            if pivot.abs() <= tiny {
                continue;
            }
            let (top, bottom) = a.split_at_mut((col + 1) * n);
            let pivot_row = &top[col * n..];
            for row_values in bottom.chunks_exact_mut(n) {
                let factor = row_values[col] / pivot;
                if factor == 0.0 {
                    continue;
                }
                row_values[col] = factor;
                for c in col + 1..n {
                    row_values[c] -= factor * pivot_row[c];
                }
            }
        }
        DenseLu { n, factors: a, pivots, tiny }
    }

    /// Solves `A x = b` in place.
    pub fn solve(&self, b: &mut [f64]) {
        let n = self.n;
        assert_eq!(b.len(), n);
        for col in 0..n {
            b.swap(col, self.pivots[col]);
        }
        for row in 0..n {
            let lower = &self.factors[row * n..row * n + row];
            let s: f64 = lower.iter().zip(&b[..row]).map(|(l, x)| l * x).sum();
            b[row] -= s;
        }
        for row in (0..n).rev() {
            let upper = &self.factors[row * n + row + 1..(row + 1) * n];
            let s = b[row] - upper.iter().zip(&b[row + 1..]).map(|(u, x)| u * x).sum::<f64>();
            let pivot = self.factors[row * n + row];
            b[row] = if pivot.abs() <= self.tiny { 0.0 } else { s / pivot };
        }
    }

    pub fn memory_bytes(&self) -> usize {
        8 * self.factors.len() + 8 * self.pivots.len()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::test_problems::random_vector;

    #[test]
    fn solves_a_nonsymmetric_system_needing_pivoting() {
        let n = 30;
        let mut a = random_vector(n * n, 7);
        a[0] = 0.0; // forces a row exchange at the first column
        let exact = random_vector(n, 8);
        let b: Vec<f64> = (0..n).map(|r| (0..n).map(|c| a[r * n + c] * exact[c]).sum()).collect();
        let lu = DenseLu::factorise(n, a);
        let mut x = b.clone();
        lu.solve(&mut x);
        for (u, v) in x.iter().zip(&exact) {
            assert!((u - v).abs() < 1e-10);
        }
    }

    /// Singular but consistent (1-D Neumann Laplacian): returns a solution, no NaN.
    #[test]
    fn singular_consistent_system_gives_a_finite_solution() {
        let n = 6;
        let mut a = vec![0.0; n * n];
        for i in 0..n - 1 {
            a[i * n + i] += 1.0;
            a[(i + 1) * n + i + 1] += 1.0;
            a[i * n + i + 1] -= 1.0;
            a[(i + 1) * n + i] -= 1.0;
        }
        let b = vec![1.0, -1.0, 2.0, 0.0, -3.0, 1.0];
        let lu = DenseLu::factorise(n, a.clone());
        let mut x = b.clone();
        lu.solve(&mut x);
        for r in 0..n {
            let ax: f64 = (0..n).map(|c| a[r * n + c] * x[c]).sum();
            assert!((ax - b[r]).abs() < 1e-10, "row {r}: {ax} vs {}", b[r]);
        }
    }
}
