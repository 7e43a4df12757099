//! Parallel vector kernels of the Krylov methods, for f64 or f32 vectors ([`Real`]). Reductions sum fixed-size
//! chunks in a fixed order, so results are bit-identical for any number of threads (rayon's own `sum` splits by
//! the thread count). Every kernel computes in f64 and rounds the stored result to the vector's type: for f64
//! vectors that is the plain arithmetic, for f32 vectors the sums keep f64 accuracy.

use super::real::Real;
use rayon::prelude::*;

/// Cells per reduction chunk and minimum per rayon task.
pub(crate) const CHUNK: usize = 8192;

/// `Σ a_i b_i`.
pub(crate) fn dot<T: Real>(a: &[T], b: &[T]) -> f64 {
    assert_eq!(a.len(), b.len());
    let partial: Vec<f64> = a
        .par_chunks(CHUNK)
        .zip(b.par_chunks(CHUNK))
        .map(|(x, y)| x.iter().zip(y).map(|(u, v)| u.to_f64() * v.to_f64()).sum::<f64>())
        .collect();
    partial.iter().sum()
}

/// `Σ_chunks term(chunk range)` over `0..n` in chunks of [`CHUNK`], added in chunk order.
pub(crate) fn chunked_sum(n: usize, term: impl Fn(std::ops::Range<usize>) -> f64 + Sync) -> f64 {
    let partial: Vec<f64> =
        (0..n.div_ceil(CHUNK)).into_par_iter().map(|c| term(c * CHUNK..((c + 1) * CHUNK).min(n))).collect();
    partial.iter().sum()
}

/// Euclidean norm.
pub(crate) fn norm<T: Real>(a: &[T]) -> f64 {
    dot(a, a).sqrt()
}

/// `y ← y + α x`.
pub(crate) fn axpy<T: Real>(alpha: f64, x: &[T], y: &mut [T]) {
    y.par_iter_mut()
        .zip(x.par_iter())
        .with_min_len(CHUNK)
        .for_each(|(yi, &xi)| *yi = T::from_f64(yi.to_f64() + alpha * xi.to_f64()));
}

/// `v ← v / d`.
pub(crate) fn divide(v: &mut [f64], d: f64) {
    v.par_iter_mut().with_min_len(CHUNK).for_each(|vi| *vi /= d);
}

/// `v ← 0`.
pub(crate) fn zero<T: Real>(v: &mut [T]) {
    v.par_iter_mut().with_min_len(CHUNK).for_each(|vi| *vi = T::ZERO);
}

/// `r ← b − r` (turns `r = A x` into the residual).
pub(crate) fn residual_from_product<T: Real>(b: &[T], r: &mut [T]) {
    r.par_iter_mut()
        .zip(b.par_iter())
        .with_min_len(CHUNK)
        .for_each(|(ri, &bi)| *ri = T::from_f64(bi.to_f64() - ri.to_f64()));
}

/// `r ← r − α v`, returning `‖r‖²` of the result (fused: one pass).
pub(crate) fn axpy_norm2<T: Real>(alpha: f64, v: &[T], r: &mut [T]) -> f64 {
    let partial: Vec<f64> = r
        .par_chunks_mut(CHUNK)
        .zip(v.par_chunks(CHUNK))
        .map(|(rc, vc)| {
            let mut s = 0.0;
            for (ri, &vi) in rc.iter_mut().zip(vc) {
                *ri = T::from_f64(ri.to_f64() - alpha * vi.to_f64());
                let stored = ri.to_f64();
                s += stored * stored;
            }
            s
        })
        .collect();
    partial.iter().sum()
}

/// `r ← r − α v`, returning `(‖r‖², r0·r)` of the result in one pass (BiCGSTAB's next ρ on the way).
pub(crate) fn axpy_norm2_dot<T: Real>(alpha: f64, v: &[T], r: &mut [T], r0: &[T]) -> (f64, f64) {
    let partial: Vec<(f64, f64)> = r
        .par_chunks_mut(CHUNK)
        .zip(v.par_chunks(CHUNK))
        .zip(r0.par_chunks(CHUNK))
        .map(|((rc, vc), r0c)| {
            let (mut rr, mut r0r) = (0.0, 0.0);
            for ((ri, &vi), &r0i) in rc.iter_mut().zip(vc).zip(r0c) {
                *ri = T::from_f64(ri.to_f64() - alpha * vi.to_f64());
                let stored = ri.to_f64();
                rr += stored * stored;
                r0r += r0i.to_f64() * stored;
            }
            (rr, r0r)
        })
        .collect();
    partial.iter().fold((0.0, 0.0), |(a, b), &(c, d)| (a + c, b + d))
}

/// `(t·s, t·t)` in one pass.
pub(crate) fn dot2<T: Real>(t: &[T], s: &[T]) -> (f64, f64) {
    let partial: Vec<(f64, f64)> = t
        .par_chunks(CHUNK)
        .zip(s.par_chunks(CHUNK))
        .map(|(tc, sc)| {
            tc.iter().zip(sc).fold((0.0, 0.0), |(ts, tt), (&ti, &si)| {
                let (ti, si) = (ti.to_f64(), si.to_f64());
                (ts + ti * si, tt + ti * ti)
            })
        })
        .collect();
    partial.iter().fold((0.0, 0.0), |(a, b), &(c, d)| (a + c, b + d))
}

/// `p ← r + β (p − ω v)`.
pub(crate) fn update_direction<T: Real>(beta: f64, omega: f64, r: &[T], v: &[T], p: &mut [T]) {
    p.par_chunks_mut(CHUNK).zip(r.par_chunks(CHUNK)).zip(v.par_chunks(CHUNK)).for_each(|((pc, rc), vc)| {
        for ((pi, &ri), &vi) in pc.iter_mut().zip(rc).zip(vc) {
            *pi = T::from_f64(ri.to_f64() + beta * (pi.to_f64() - omega * vi.to_f64()));
        }
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kernels_agree_with_sequential_arithmetic() {
        let n = 3 * CHUNK + 17;
        let a: Vec<f64> = (0..n).map(|i| (i as f64 * 0.37).sin()).collect();
        let b: Vec<f64> = (0..n).map(|i| (i as f64 * 0.11).cos()).collect();
        let seq: f64 = a.iter().zip(&b).map(|(x, y)| x * y).sum();
        assert!((dot(&a, &b) - seq).abs() < 1e-9);
        let (ts, tt) = dot2(&a, &b);
        assert!((ts - seq).abs() < 1e-9 && (tt - dot(&a, &a)).abs() < 1e-9);
        let mut r = b.clone();
        let n2 = axpy_norm2(0.5, &a, &mut r);
        assert!((r[5] - (b[5] - 0.5 * a[5])).abs() < 1e-15);
        assert!((n2 - dot(&r, &r)).abs() < 1e-9);
        let mut r2 = b.clone();
        let (n2b, d2) = axpy_norm2_dot(0.5, &a, &mut r2, &b);
        assert!((n2b - n2).abs() < 1e-9 && (d2 - dot(&b, &r2)).abs() < 1e-9);
        let chunked = chunked_sum(n, |range| range.map(|i| a[i] * b[i]).sum());
        assert_eq!(chunked.to_bits(), dot(&a, &b).to_bits());
        let mut p = a.clone();
        update_direction(2.0, 0.5, &b, &a, &mut p);
        assert!((p[7] - (b[7] + 2.0 * (a[7] - 0.5 * a[7]))).abs() < 1e-15);
    }
}
