//! Assembly of a [`FaceCoupledOperator`] into an explicit 7-point stencil.
//!
//! Row P of the assembled matrix reads
//!
//! ```text
//! (A x)_P = a_P x_P + Σ_{axes a} ( a_P^{a−} x_{P−e_a} + a_P^{a+} x_{P+e_a} )
//! ```
//!
//! with the coefficients of each face taken from [`face_coefficients`]. Neighbours across non-periodic boundary
//! faces have coefficient 0; across a periodic axis they wrap around. The stencil is generic over the stored
//! precision so that multigrid levels can be kept in f32.

use super::operator::{AdvectionScheme, FaceCoupledOperator};
use super::real::Real;
use rayon::prelude::*;
use sprs::{CsMat, TriMat};

/// Flat index of the face normal to `axis` with lower-corner index (i, j, k), as `mesh::Grid::face_index`.
#[inline]
pub(crate) fn face_index(shape: [usize; 3], axis: usize, i: usize, j: usize, k: usize) -> usize {
    let mut s = shape;
    s[axis] += 1;
    i + s[0] * (j + s[1] * k)
}

/// Matrix entries one face between a lower cell L and an upper cell U (along some axis) contributes.
///
/// The face term of row L is `G (x_L − x_U) + F x_f` and that of row U is `G (x_U − x_L) − F x_f`, with F the
/// signed flux (positive from L to U) and x_f the face value of the scheme (mean, or the upstream cell).
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct FaceCoefficients {
    /// Added to a_LL.
    pub lower_diag: f64,
    /// a_LU.
    pub lower_off: f64,
    /// Added to a_UU.
    pub upper_diag: f64,
    /// a_UL.
    pub upper_off: f64,
}

#[inline]
pub(crate) fn face_coefficients(g: f64, f: f64, scheme: AdvectionScheme) -> FaceCoefficients {
    match scheme {
        AdvectionScheme::Central => FaceCoefficients {
            lower_diag: g + 0.5 * f,
            lower_off: -g + 0.5 * f,
            upper_diag: g - 0.5 * f,
            upper_off: -g - 0.5 * f,
        },
        AdvectionScheme::Upwind => FaceCoefficients {
            lower_diag: g + f.max(0.0),
            lower_off: -g + f.min(0.0),
            upper_diag: g + (-f).max(0.0),
            upper_off: -g - f.max(0.0),
        },
    }
}

/// Where the six neighbours of the cells of one x-line live. Missing neighbours (non-periodic boundary) point at
/// the cell itself; their coefficient is zero.
#[derive(Clone, Copy, Debug)]
pub(crate) struct LineNeighbours {
    pub nx: usize,
    /// First flat index of the line.
    pub base: usize,
    /// In-line index of the lower neighbour of i = 0 and of the upper neighbour of i = nx − 1.
    pub x_wrap: [usize; 2],
    /// First flat index of the lower and upper neighbour lines along y.
    pub y: [usize; 2],
    /// First flat index of the lower and upper neighbour lines along z.
    pub z: [usize; 2],
}

impl LineNeighbours {
    /// Neighbours of line `line = j + ny k` of a grid of `shape`.
    #[inline]
    pub fn new(shape: [usize; 3], periodic: [bool; 3], line: usize) -> Self {
        let [nx, ny, nz] = shape;
        let j = line % ny;
        let k = line / ny;
        let base = line * nx;
        let wraps = |a: usize| periodic[a] && shape[a] > 1;
        let x_wrap = if wraps(0) { [nx - 1, 0] } else { [0, nx - 1] };
        let y_line = |jj: usize| (jj + ny * k) * nx;
        let z_line = |kk: usize| (j + ny * kk) * nx;
        let y = [
            if j > 0 {
                y_line(j - 1)
            } else if wraps(1) {
                y_line(ny - 1)
            } else {
                base
            },
            if j + 1 < ny {
                y_line(j + 1)
            } else if wraps(1) {
                y_line(0)
            } else {
                base
            },
        ];
        let z = [
            if k > 0 {
                z_line(k - 1)
            } else if wraps(2) {
                z_line(nz - 1)
            } else {
                base
            },
            if k + 1 < nz {
                z_line(k + 1)
            } else if wraps(2) {
                z_line(0)
            } else {
                base
            },
        ];
        LineNeighbours { nx, base, x_wrap, y, z }
    }
}

/// Assembled 7-point stencil: `(A x)_P = diag·x_P + Σ_6 neighbours coef·x_N` (coefficient 0 across non-periodic
/// boundaries). Inactive cells have the identity row (times the assembly scale).
#[derive(Clone, Debug)]
pub struct Stencil7<T = f64> {
    shape: [usize; 3],
    periodic: [bool; 3],
    diag: Vec<T>,
    /// Coefficient of row P on its lower neighbour along each axis.
    lower: [Vec<T>; 3],
    /// Coefficient of row P on its upper neighbour along each axis.
    upper: [Vec<T>; 3],
}

impl Stencil7<f64> {
    /// Assembles the operator under `scheme` in f64.
    pub fn assemble(op: &FaceCoupledOperator, scheme: AdvectionScheme) -> Self {
        Self::assemble_scaled(op, scheme, 1.0)
    }
}

impl<T: Real> Stencil7<T> {
    /// Assembles `scale · A` in precision T. Faces touching an inactive cell carry no coupling (the operator's
    /// contract); inactive rows become `scale · identity`, so that `scale · A` is exact in every row.
    pub fn assemble_scaled(op: &FaceCoupledOperator, scheme: AdvectionScheme, scale: f64) -> Self {
        Self::assemble_with(op, scheme, |_| scale).0
    }

    /// Assembles `A / max|a_PP|` and returns it with the scale `1 / max|a_PP|` used (1 if the diagonal is zero
    /// or not finite): an O(1) matrix whatever the SI magnitudes, for storage in f32.
    pub fn assemble_normalised(op: &FaceCoupledOperator, scheme: AdvectionScheme) -> (Self, f64) {
        Self::assemble_with(op, scheme, |diag| {
            let max = diag.iter().fold(0.0f64, |m, d| m.max(d.abs()));
            if max > 0.0 && max.is_finite() {
                1.0 / max
            } else {
                1.0
            }
        })
    }

    fn assemble_with(
        op: &FaceCoupledOperator,
        scheme: AdvectionScheme,
        choose_scale: impl FnOnce(&[f64]) -> f64,
    ) -> (Self, f64) {
        let shape = op.shape;
        let [nx, ny, nz] = shape;
        let n = nx * ny * nz;
        let mut diag = vec![0.0f64; n];
        let mut lower = [vec![0.0f64; n], vec![0.0f64; n], vec![0.0f64; n]];
        let mut upper = [vec![0.0f64; n], vec![0.0f64; n], vec![0.0f64; n]];
        let stride = [1, nx, nx * ny];
        for axis in 0..3 {
            let na = shape[axis];
            if na < 2 {
                continue;
            }
            let g = &op.conductance[axis];
            let f = &op.flux[axis];
            for k in 0..nz {
                for j in 0..ny {
                    for i in 0..nx {
                        let upper_cell = i + nx * (j + ny * k);
                        let coord = [i, j, k][axis];
                        let lower_cell = if coord > 0 {
                            upper_cell - stride[axis]
                        } else if op.periodic[axis] {
                            upper_cell + (na - 1) * stride[axis]
                        } else {
                            continue;
                        };
                        if !op.active[lower_cell] || !op.active[upper_cell] {
                            continue;
                        }
                        let face = face_index(shape, axis, i, j, k);
                        let c = face_coefficients(g[face], f[face], scheme);
                        diag[lower_cell] += c.lower_diag;
                        upper[axis][lower_cell] += c.lower_off;
                        diag[upper_cell] += c.upper_diag;
                        lower[axis][upper_cell] += c.upper_off;
                    }
                }
            }
        }
        for (p, d) in diag.iter_mut().enumerate() {
            if op.active[p] {
                *d += op.sink[p];
            }
        }
        let scale = choose_scale(&diag);
        for (p, d) in diag.iter_mut().enumerate() {
            if !op.active[p] {
                *d = 1.0; // identity row of an inactive cell, scaled with the rest below
            }
        }
        let convert = |v: Vec<f64>| v.into_iter().map(|a| T::from_f64(scale * a)).collect::<Vec<T>>();
        let stencil = Stencil7 {
            shape,
            periodic: op.periodic,
            diag: convert(diag),
            lower: lower.map(convert),
            upper: upper.map(convert),
        };
        (stencil, scale)
    }

    pub fn shape(&self) -> [usize; 3] {
        self.shape
    }

    pub fn periodic(&self) -> [bool; 3] {
        self.periodic
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.diag.len()
    }

    pub fn is_empty(&self) -> bool {
        self.diag.is_empty()
    }

    /// Diagonal entry of row `p`.
    #[inline]
    pub fn diagonal(&self, p: usize) -> T {
        self.diag[p]
    }

    /// Largest absolute diagonal entry.
    pub fn max_abs_diagonal(&self) -> f64 {
        self.diag.iter().fold(0.0f64, |m, &d| m.max(d.to_f64().abs()))
    }

    /// Bytes held by the coefficient arrays.
    pub fn memory_bytes(&self) -> usize {
        7 * self.diag.len() * std::mem::size_of::<T>()
    }

    pub(crate) fn line_neighbours(&self, line: usize) -> LineNeighbours {
        LineNeighbours::new(self.shape, self.periodic, line)
    }

    /// Number of x-lines.
    pub(crate) fn lines(&self) -> usize {
        self.shape[1] * self.shape[2]
    }

    /// `out = (A x)` on x-line `line` (out has the line's length), written over slices so that it vectorises.
    #[inline]
    pub(crate) fn line_product(&self, x: &[T], line: usize, out: &mut [T]) {
        let ln = self.line_neighbours(line);
        let nx = ln.nx;
        let r = ln.base..ln.base + nx;
        let xl = &x[r.clone()];
        let (d, ly, uy, lz, uz) = (
            &self.diag[r.clone()],
            &self.lower[1][r.clone()],
            &self.upper[1][r.clone()],
            &self.lower[2][r.clone()],
            &self.upper[2][r.clone()],
        );
        let (ym, yp) = (&x[ln.y[0]..ln.y[0] + nx], &x[ln.y[1]..ln.y[1] + nx]);
        let (zm, zp) = (&x[ln.z[0]..ln.z[0] + nx], &x[ln.z[1]..ln.z[1] + nx]);
        let out = &mut out[..nx];
        for i in 0..nx {
            out[i] = d[i] * xl[i] + ly[i] * ym[i] + uy[i] * yp[i] + lz[i] * zm[i] + uz[i] * zp[i];
        }
        let (lx, ux) = (&self.lower[0][r.clone()], &self.upper[0][r]);
        for i in 1..nx {
            out[i] += lx[i] * xl[i - 1];
        }
        for i in 0..nx - 1 {
            out[i] += ux[i] * xl[i + 1];
        }
        out[0] += lx[0] * xl[ln.x_wrap[0]];
        out[nx - 1] += ux[nx - 1] * xl[ln.x_wrap[1]];
    }

    /// `y = A x`.
    pub fn apply(&self, x: &[T], y: &mut [T]) {
        assert_eq!(x.len(), self.len(), "stencil apply: x has the wrong length");
        assert_eq!(y.len(), self.len(), "stencil apply: y has the wrong length");
        let nx = self.shape[0];
        y.par_chunks_mut(nx)
            .with_min_len(min_lines(nx))
            .enumerate()
            .for_each(|(line, yl)| self.line_product(x, line, yl));
    }

    /// The stencil as a CSR matrix (f64; duplicate entries of a periodic axis of two cells are summed).
    pub fn to_csr(&self) -> CsMat<f64> {
        let n = self.len();
        let mut tri = TriMat::with_capacity((n, n), 7 * n);
        for line in 0..self.lines() {
            let ln = self.line_neighbours(line);
            for i in 0..ln.nx {
                let p = ln.base + i;
                tri.add_triplet(p, p, self.diag[p].to_f64());
                let xm = if i > 0 { p - 1 } else { ln.base + ln.x_wrap[0] };
                let xp = if i + 1 < ln.nx { p + 1 } else { ln.base + ln.x_wrap[1] };
                let entries = [
                    (xm, self.lower[0][p]),
                    (xp, self.upper[0][p]),
                    (ln.y[0] + i, self.lower[1][p]),
                    (ln.y[1] + i, self.upper[1][p]),
                    (ln.z[0] + i, self.lower[2][p]),
                    (ln.z[1] + i, self.upper[2][p]),
                ];
                for (q, a) in entries {
                    if a != T::ZERO {
                        tri.add_triplet(p, q, a.to_f64());
                    }
                }
            }
        }
        tri.to_csr()
    }
}

/// Minimum number of x-lines per rayon task, so that a task holds a few thousand cells.
#[inline]
pub(crate) fn min_lines(nx: usize) -> usize {
    (4096 / nx.max(1)).max(1)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::test_problems::{random_operator, random_vector};

    #[test]
    fn apply_equals_csr_product_for_every_periodicity() {
        for (shape, periodic) in [
            ([5, 4, 3], [false, false, false]),
            ([5, 4, 3], [true, false, true]),
            ([2, 3, 4], [true, true, true]),
            ([6, 1, 5], [false, true, true]),
        ] {
            for scheme in [AdvectionScheme::Central, AdvectionScheme::Upwind] {
                let op = random_operator(shape, periodic, 11);
                let s = Stencil7::assemble(&op, scheme);
                let x = random_vector(s.len(), 3);
                let mut y = vec![0.0; s.len()];
                s.apply(&x, &mut y);
                let a = s.to_csr();
                let yc = &a * &ndarray_free_vec(&x);
                for p in 0..s.len() {
                    assert!(
                        (y[p] - yc[p]).abs() <= 1e-12 * (1.0 + y[p].abs()),
                        "{shape:?} {periodic:?} row {p}"
                    );
                }
            }
        }
    }

    fn ndarray_free_vec(x: &[f64]) -> sprs::CsVec<f64> {
        sprs::CsVec::new(x.len(), (0..x.len()).collect(), x.to_vec())
    }

    /// A 3×1×1 periodic line, hand-computed rows for both schemes.
    #[test]
    fn central_and_upwind_rows_by_hand() {
        // Faces 0..3 along x; face 0 is the wrap face between cell 2 and cell 0, face 3 is ignored.
        let op = FaceCoupledOperator {
            shape: [3, 1, 1],
            periodic: [true, false, false],
            conductance: [vec![1.0, 2.0, 3.0, 99.0], vec![0.0; 6], vec![0.0; 6]],
            flux: [vec![0.5, 1.0, -2.0, 99.0], vec![5.0; 6], vec![5.0; 6]],
            sink: vec![0.1, 0.2, 0.3],
            active: vec![true; 3],
        };
        let central = Stencil7::assemble(&op, AdvectionScheme::Central).to_csr().to_dense();
        // Row 0: face 0 (lower, G=1, F=0.5 into cell 0 from cell 2), face 1 (upper, G=2, F=1 out of cell 0).
        // diag = 0.1 + (1 − 0.25) + (2 + 0.5); a_01 = −2 + 0.5; a_02 = −1 − 0.25.
        assert!((central[[0, 0]] - 3.35).abs() < 1e-14);
        assert!((central[[0, 1]] + 1.5).abs() < 1e-14);
        assert!((central[[0, 2]] + 1.25).abs() < 1e-14);
        // Row 2: face 2 (lower, G=3, F=−2: flux from cell 2 to cell 1), face 0 (upper, G=1, F=0.5 out of cell 2).
        // diag = 0.3 + (3 + 1) + (1 + 0.25); a_21 = −3 + 1; a_20 = −1 + 0.25.
        assert!((central[[2, 2]] - 5.55).abs() < 1e-14);
        assert!((central[[2, 1]] + 2.0).abs() < 1e-14);
        assert!((central[[2, 0]] + 0.75).abs() < 1e-14);
        let upwind = Stencil7::assemble(&op, AdvectionScheme::Upwind).to_csr().to_dense();
        // Row 0: inflow through face 0 from cell 2 (a_02 = −1 − 0.5), outflow through face 1 (diag += 1).
        assert!((upwind[[0, 0]] - (0.1 + 1.0 + 2.0 + 1.0)).abs() < 1e-14);
        assert!((upwind[[0, 2]] + 1.5).abs() < 1e-14);
        assert!((upwind[[0, 1]] + 2.0).abs() < 1e-14);
        // Row 1: inflow from cell 0 through face 1 (F = 1) and from cell 2 through face 2 (F = −2).
        assert!((upwind[[1, 1]] - (0.2 + 2.0 + 3.0)).abs() < 1e-14);
        assert!((upwind[[1, 0]] + 3.0).abs() < 1e-14);
        assert!((upwind[[1, 2]] + 5.0).abs() < 1e-14);
    }

    #[test]
    fn periodic_coupling_wraps_and_non_periodic_does_not() {
        let mut op = random_operator([4, 3, 2], [false, true, false], 5);
        op.flux.iter_mut().for_each(|f| f.iter_mut().for_each(|v| *v = 0.0));
        let a = Stencil7::assemble(&op, AdvectionScheme::Central).to_csr().to_dense();
        let idx = |i: usize, j: usize, k: usize| i + 4 * (j + 3 * k);
        // y periodic: cell (1,0,1) couples to (1,2,1) through face j=0 with conductance G_y(1,0,1).
        let g = op.conductance[1][face_index([4, 3, 2], 1, 1, 0, 1)];
        assert!(g > 0.0);
        assert!((a[[idx(1, 0, 1), idx(1, 2, 1)]] + g).abs() < 1e-14);
        // x not periodic: no coupling between i = 0 and i = 3.
        assert_eq!(a[[idx(0, 1, 0), idx(3, 1, 0)]], 0.0);
        // symmetric for pure diffusion
        for p in 0..24 {
            for q in 0..24 {
                assert!((a[[p, q]] - a[[q, p]]).abs() < 1e-14);
            }
        }
    }
}
