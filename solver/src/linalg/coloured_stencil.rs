//! The 7-point stencil of a multigrid level, stored per red–black colour, and vectors in the same split layout.
//!
//! Cell (i, j, k) has colour `(i + j + k) mod 2` (red 0, black 1). Along an x-line the cells of one colour are
//! every second cell, `i = first + 2m` with `first = (colour + j + k) mod 2`, and cell i lives in slot
//! `m = ⌊i/2⌋` of its colour's array, each line holding `half = ⌈nx/2⌉` slots (a slot past the line's end is
//! padding: coefficient 0, diagonal 1, value 0). In this layout every neighbour of a cell is in the other
//! colour's array at unit stride (x: slots m − 1 + first and m + first of the same line; y, z: slot m of the
//! neighbour line), so a colour sweep reads each of its coefficients once, reads the other colour contiguously
//! and writes its own colour: half the coefficient traffic of a natural-order stencil per colour sweep, and
//! loops that vectorise (common practice for red–black smoothers on structured grids). The coarse cell of a
//! fine cell in slot m is `I = ⌊i/2⌋ = m` along x, which keeps grid transfers line-local.
//!
//! A periodic axis of odd size puts a cell and its wrap-around neighbour in the same colour; along y or z such
//! levels are swept sequentially (see [`ColouredStencil::needs_sequential_sweeps`]).

use super::operator::{AdvectionScheme, FaceCoupledOperator};
use super::real::Real;
use super::stencil::{face_coefficients, face_index, min_lines};
use rayon::prelude::*;

/// A level vector in split layout: `[red, black]`, `lines · half` slots each.
pub(crate) type Split<T> = [Vec<T>; 2];

/// The coefficients of one colour: `(A x)_P = diag·x_P + Σ lower[a]·x_{P−e_a} + upper[a]·x_{P+e_a}`. The
/// off-diagonals are stored as [`Real::Coefficient`] (bfloat16 for an f32 level), and the diagonal absorbs their
/// rounding, `diag = a_PP + Σ (a_PN − stored a_PN)`, so each row keeps the row sum of the exact row: rounding
/// then perturbs the couplings by a relative 2⁻⁹ like a slightly different conductance, instead of shifting the
/// near-null smooth modes (which a rounded diagonal alone would do).
#[derive(Clone, Debug)]
struct ColourCoefficients<T: Real> {
    diag: Vec<T>,
    lower: [Vec<T::Coefficient>; 3],
    upper: [Vec<T::Coefficient>; 3],
}

/// Off-diagonal slices of one line of one colour.
struct LineCoefficients<'a, T: Real> {
    lower: [&'a [T::Coefficient]; 3],
    upper: [&'a [T::Coefficient]; 3],
}

/// `scale · A` of one level (inactive rows `scale · identity`), stored per colour.
#[derive(Clone, Debug)]
pub(crate) struct ColouredStencil<T: Real> {
    shape: [usize; 3],
    periodic: [bool; 3],
    half: usize,
    colours: [ColourCoefficients<T>; 2],
}

/// Where the faces and neighbours of the cells of one x-line live, for assembling their rows.
struct LineRows<'a> {
    op: &'a FaceCoupledOperator,
    scheme: AdvectionScheme,
    nx: usize,
    /// First cell of the line.
    base: usize,
    /// First x-face of the line (faces `nx + 1` per line; the wrap-around face is the first).
    x_face: usize,
    wrap_x: bool,
    /// Along y and z: the neighbour line's first cell and the first face between, below and above (None across a
    /// non-periodic boundary or along an axis of size 1).
    below: [Option<(usize, usize)>; 2],
    above: [Option<(usize, usize)>; 2],
}

impl<'a> LineRows<'a> {
    fn new(op: &'a FaceCoupledOperator, scheme: AdvectionScheme, line: usize) -> Self {
        let [nx, ny, nz] = op.shape;
        let (j, k) = (line % ny, line / ny);
        let base = line * nx;
        let plane = nx * ny;
        let wraps = |a: usize| op.periodic[a] && op.shape[a] > 1;
        let y_face = |jj: usize| face_index(op.shape, 1, 0, jj, k);
        let z_face = |kk: usize| face_index(op.shape, 2, 0, j, kk);
        let below = [
            if j > 0 {
                Some((base - nx, y_face(j)))
            } else if wraps(1) {
                Some((base + nx * (ny - 1), y_face(0)))
            } else {
                None
            },
            if k > 0 {
                Some((base - plane, z_face(k)))
            } else if wraps(2) {
                Some((base + plane * (nz - 1), z_face(0)))
            } else {
                None
            },
        ];
        let above = [
            if j + 1 < ny {
                Some((base + nx, y_face(j + 1)))
            } else if wraps(1) {
                Some((base - nx * (ny - 1), y_face(0)))
            } else {
                None
            },
            if k + 1 < nz {
                Some((base + plane, z_face(k + 1)))
            } else if wraps(2) {
                Some((base - plane * (nz - 1), z_face(0)))
            } else {
                None
            },
        ];
        LineRows {
            op,
            scheme,
            nx,
            base,
            x_face: face_index(op.shape, 0, 0, j, k),
            wrap_x: wraps(0),
            below,
            above,
        }
    }

    /// Row of cell i of the line in f64 before scaling: diagonal and the six neighbour coefficients (0 across a
    /// non-periodic boundary or next to an inactive cell; identity for an inactive cell), as in
    /// [`super::stencil::Stencil7`].
    #[inline]
    fn row(&self, i: usize) -> (f64, [f64; 3], [f64; 3]) {
        let op = self.op;
        let p = self.base + i;
        let mut lower = [0.0; 3];
        let mut upper = [0.0; 3];
        if !op.active[p] {
            return (1.0, lower, upper);
        }
        let mut diag = op.sink[p];
        let coefficients =
            |a: usize, f: usize| face_coefficients(op.conductance[a][f], op.flux[a][f], self.scheme);
        // Along x: the face below P (P is its upper cell) and the face above (P is its lower cell).
        if i > 0 || self.wrap_x {
            let q = if i > 0 { p - 1 } else { self.base + self.nx - 1 };
            if op.active[q] {
                let fc = coefficients(0, self.x_face + i);
                diag += fc.upper_diag;
                lower[0] = fc.upper_off;
            }
        }
        if i + 1 < self.nx || self.wrap_x {
            let (q, f) =
                if i + 1 < self.nx { (p + 1, self.x_face + i + 1) } else { (self.base, self.x_face) };
            if op.active[q] {
                let fc = coefficients(0, f);
                diag += fc.lower_diag;
                upper[0] = fc.lower_off;
            }
        }
        for a in 0..2 {
            if let Some((line, face)) = self.below[a] {
                if op.active[line + i] {
                    let fc = coefficients(a + 1, face + i);
                    diag += fc.upper_diag;
                    lower[a + 1] = fc.upper_off;
                }
            }
            if let Some((line, face)) = self.above[a] {
                if op.active[line + i] {
                    let fc = coefficients(a + 1, face + i);
                    diag += fc.lower_diag;
                    upper[a + 1] = fc.lower_off;
                }
            }
        }
        (diag, lower, upper)
    }
}

impl<T: Real> ColouredStencil<T> {
    /// Assembles `A / max|a_PP|` (over active rows) and returns it with that scale (1 if the diagonal is zero or
    /// not finite): an O(1) matrix whatever the SI magnitudes, for storage in f32.
    pub fn assemble_normalised(op: &FaceCoupledOperator, scheme: AdvectionScheme) -> (Self, f64) {
        let [nx, ny, nz] = op.shape;
        let max = (0..ny * nz)
            .into_par_iter()
            .with_min_len(min_lines(nx))
            .map(|line| {
                let rows = LineRows::new(op, scheme, line);
                (0..nx).filter(|&i| op.active[line * nx + i]).fold(0.0f64, |m, i| m.max(rows.row(i).0.abs()))
            })
            .reduce(|| 0.0, f64::max);
        let scale = if max > 0.0 && max.is_finite() { 1.0 / max } else { 1.0 };
        (Self::assemble(op, scheme, scale), scale)
    }

    /// Assembles `scale · A` in precision T, row by row in parallel (no f64 copy of the stencil).
    pub fn assemble(op: &FaceCoupledOperator, scheme: AdvectionScheme, scale: f64) -> Self {
        let shape = op.shape;
        let [nx, ny, nz] = shape;
        let half = nx.div_ceil(2);
        let len = half * ny * nz;
        let build = |colour: usize| {
            let mut c = ColourCoefficients {
                diag: vec![T::ONE; len],
                lower: std::array::from_fn(|_| vec![T::to_coefficient(0.0); len]),
                upper: std::array::from_fn(|_| vec![T::to_coefficient(0.0); len]),
            };
            let [l0, l1, l2] = &mut c.lower;
            let [u0, u1, u2] = &mut c.upper;
            (
                c.diag.par_chunks_mut(half),
                l0.par_chunks_mut(half),
                l1.par_chunks_mut(half),
                l2.par_chunks_mut(half),
                u0.par_chunks_mut(half),
                u1.par_chunks_mut(half),
                u2.par_chunks_mut(half),
            )
                .into_par_iter()
                .enumerate()
                .with_min_len(min_lines(nx))
                .for_each(|(line, (d, l0, l1, l2, u0, u1, u2))| {
                    let (j, k) = (line % ny, line / ny);
                    let first = (colour + j + k) % 2;
                    let rows = LineRows::new(op, scheme, line);
                    for m in 0..slots(nx, first) {
                        let (diag, lower, upper) = rows.row(first + 2 * m);
                        let mut rounding = 0.0;
                        let mut store = |a: f64| {
                            let stored = T::to_coefficient(scale * a);
                            rounding += scale * a - T::from_coefficient(stored).to_f64();
                            stored
                        };
                        (l0[m], l1[m], l2[m]) = (store(lower[0]), store(lower[1]), store(lower[2]));
                        (u0[m], u1[m], u2[m]) = (store(upper[0]), store(upper[1]), store(upper[2]));
                        d[m] = T::from_f64(scale * diag + rounding);
                    }
                });
            c
        };
        let colours = [build(0), build(1)];
        ColouredStencil { shape, periodic: op.periodic, half, colours }
    }

    pub fn shape(&self) -> [usize; 3] {
        self.shape
    }

    pub fn periodic(&self) -> [bool; 3] {
        self.periodic
    }

    /// Slots per line and colour.
    pub fn half(&self) -> usize {
        self.half
    }

    /// Number of x-lines.
    pub fn lines(&self) -> usize {
        self.shape[1] * self.shape[2]
    }

    /// Number of grid cells.
    pub fn cells(&self) -> usize {
        self.shape[0] * self.shape[1] * self.shape[2]
    }

    /// A zero vector in split layout.
    pub fn zeros(&self) -> Split<T> {
        let len = self.half * self.lines();
        [vec![T::ZERO; len], vec![T::ZERO; len]]
    }

    /// Bytes held by the coefficient arrays.
    pub fn memory_bytes(&self) -> usize {
        2 * self.half * self.lines() * (std::mem::size_of::<T>() + 6 * std::mem::size_of::<T::Coefficient>())
    }

    /// True when a periodic y or z axis of odd size puts wrap-around neighbours in the same colour: colour
    /// sweeps then run line after line in a fixed order instead of in parallel.
    pub fn needs_sequential_sweeps(&self) -> bool {
        (1..3).any(|a| self.periodic[a] && self.shape[a] > 1 && self.shape[a] % 2 == 1)
    }

    /// True when a periodic axis of odd size puts some wrap-around neighbours in the same colour: a colour sweep
    /// then leaves a residual on its own colour, so transfers must cover both colours.
    pub fn has_same_colour_wrap(&self) -> bool {
        (0..3).any(|a| self.periodic[a] && self.shape[a] > 1 && self.shape[a] % 2 == 1)
    }

    /// First natural x index of `colour` on line `line`.
    #[inline]
    pub fn first(&self, colour: usize, line: usize) -> usize {
        let ny = self.shape[1];
        (colour + line % ny + line / ny) % 2
    }

    /// Slot of natural index p in split layout: (colour, index into that colour's array).
    #[inline]
    pub fn split_index(&self, p: usize) -> (usize, usize) {
        let [nx, ny, _] = self.shape;
        let (i, line) = (p % nx, p / nx);
        let colour = (i + line % ny + line / ny) % 2;
        (colour, line * self.half + i / 2)
    }

    fn line_coefficients(&self, colour: usize, line: usize) -> LineCoefficients<'_, T> {
        let c = &self.colours[colour];
        let r = line * self.half..(line + 1) * self.half;
        LineCoefficients {
            lower: [&c.lower[0][r.clone()], &c.lower[1][r.clone()], &c.lower[2][r.clone()]],
            upper: [&c.upper[0][r.clone()], &c.upper[1][r.clone()], &c.upper[2][r]],
        }
    }

    /// The y/z neighbour segments of `line` for a cell of `colour` (lower y, upper y, lower z, upper z): in the
    /// other colour's array, except across an odd periodic wrap where they are copies of the own colour's
    /// segments (`scratch`). A missing neighbour (non-periodic boundary, coefficient 0) points at the line's
    /// own segment of the other colour.
    fn neighbour_lines<'a>(
        &self,
        line: usize,
        own_all: &[T],
        other_all: &'a [T],
        scratch: &'a mut [Vec<T>; 4],
    ) -> [&'a [T]; 4] {
        let [_, ny, nz] = self.shape;
        let h = self.half;
        let (j, k) = (line % ny, line / ny);
        let wraps = |a: usize| self.periodic[a] && self.shape[a] > 1;
        // Neighbour lines by index arithmetic (this runs once per line and colour sweep): one step in j or k
        // changes the colour parity, a wrap-around keeps it when the axis has odd size; a missing neighbour is
        // the line itself.
        let (y_odd, z_odd) = (ny % 2 == 1, nz % 2 == 1);
        let [y_lo, y_hi, z_lo, z_hi] = [
            if j > 0 {
                (line - 1, false)
            } else if wraps(1) {
                (line + ny - 1, y_odd)
            } else {
                (line, false)
            },
            if j + 1 < ny {
                (line + 1, false)
            } else if wraps(1) {
                (line + 1 - ny, y_odd)
            } else {
                (line, false)
            },
            if k > 0 {
                (line - ny, false)
            } else if wraps(2) {
                (line + ny * (nz - 1), z_odd)
            } else {
                (line, false)
            },
            if k + 1 < nz {
                (line + ny, false)
            } else if wraps(2) {
                (line - ny * (nz - 1), z_odd)
            } else {
                (line, false)
            },
        ];
        let targets = [y_lo.0, y_hi.0, z_lo.0, z_hi.0];
        let same = [y_lo.1, y_hi.1, z_lo.1, z_hi.1];
        for (s, &t) in targets.iter().enumerate() {
            if same[s] {
                scratch[s].clear();
                scratch[s].extend_from_slice(&own_all[t * h..(t + 1) * h]);
            }
        }
        let scratch: &'a [Vec<T>; 4] = scratch;
        std::array::from_fn(|s| {
            if same[s] {
                &scratch[s][..]
            } else {
                let t = targets[s];
                &other_all[t * h..(t + 1) * h]
            }
        })
    }

    /// Off-diagonal sums `Σ_6 a_PN x_N` of the cells of `colour` on `line` into `off[0..slots]`.
    #[allow(clippy::too_many_arguments)]
    fn line_off_diagonal(
        &self,
        colour: usize,
        line: usize,
        own: &[T],
        other: &[T],
        neighbours: [&[T]; 4],
        off: &mut [T],
    ) -> usize {
        let nx = self.shape[0];
        let first = self.first(colour, line);
        let count = slots(nx, first);
        if count == 0 {
            return 0;
        }
        let co = self.line_coefficients(colour, line);
        let wrap_x = self.periodic[0] && nx > 1;
        let edge = |m: usize| -> T {
            let i = first + 2 * m;
            // The wrap-around neighbour (cell nx − 1 of cell 0, cell 0 of cell nx − 1) has the same colour when
            // nx − 1 is even.
            let same = (nx - 1).is_multiple_of(2);
            let xl = if i > 0 {
                other[(i - 1) / 2]
            } else if wrap_x {
                if same {
                    own[(nx - 1) / 2]
                } else {
                    other[(nx - 1) / 2]
                }
            } else {
                T::ZERO
            };
            let xu = if i + 1 < nx {
                other[i.div_ceil(2)]
            } else if wrap_x {
                if same {
                    own[0]
                } else {
                    other[0]
                }
            } else {
                T::ZERO
            };
            let c = |stored: &[T::Coefficient]| T::from_coefficient(stored[m]);
            c(co.lower[0]) * xl
                + c(co.upper[0]) * xu
                + c(co.lower[1]) * neighbours[0][m]
                + c(co.upper[1]) * neighbours[1][m]
                + c(co.lower[2]) * neighbours[2][m]
                + c(co.upper[2]) * neighbours[3][m]
        };
        let m_lo = if first == 0 { 1 } else { 0 };
        let last_is_edge = first + 2 * (count - 1) == nx - 1;
        let m_hi = if last_is_edge { count - 1 } else { count };
        if m_lo > 0 {
            off[0] = edge(0);
        }
        if m_hi > m_lo {
            let len = m_hi - m_lo;
            let r = m_lo..m_hi;
            let xl = &other[m_lo + first - 1..m_lo + first - 1 + len];
            let xu = &other[m_lo + first..m_lo + first + len];
            let (lx, ux) = (&co.lower[0][r.clone()], &co.upper[0][r.clone()]);
            let (ly, uy) = (&co.lower[1][r.clone()], &co.upper[1][r.clone()]);
            let (lz, uz) = (&co.lower[2][r.clone()], &co.upper[2][r.clone()]);
            let (n0, n1) = (&neighbours[0][r.clone()], &neighbours[1][r.clone()]);
            let (n2, n3) = (&neighbours[2][r.clone()], &neighbours[3][r.clone()]);
            let out = &mut off[r];
            let c = T::from_coefficient;
            for q in 0..len {
                out[q] = c(lx[q]) * xl[q]
                    + c(ux[q]) * xu[q]
                    + c(ly[q]) * n0[q]
                    + c(uy[q]) * n1[q]
                    + c(lz[q]) * n2[q]
                    + c(uz[q]) * n3[q];
            }
        }
        if last_is_edge && count > m_lo {
            off[count - 1] = edge(count - 1);
        }
        count
    }

    /// One Gauss–Seidel sweep over the cells of `colour`: `x_P ← (b_P − Σ_6 a_PN x_N) / a_PP`. The result does
    /// not depend on the number of threads.
    pub fn smooth(&self, colour: usize, x: &mut Split<T>, b: &Split<T>) {
        let h = self.half;
        let (own_all, other_all) = split_own_other(x, colour);
        let b = &b[colour];
        let update = |line: usize, own: &mut [T], neighbours: [&[T]; 4], off: &mut [T]| {
            let count = self.line_off_diagonal(
                colour,
                line,
                own,
                other_all_line(other_all, h, line),
                neighbours,
                off,
            );
            let d = &self.colours[colour].diag[line * h..line * h + count];
            let bl = &b[line * h..line * h + count];
            for m in 0..count {
                own[m] = (bl[m] - off[m]) / d[m];
            }
        };
        if self.needs_sequential_sweeps() || self.cells() < 4096 {
            let mut scratch: [Vec<T>; 4] = Default::default();
            let mut off = vec![T::ZERO; h];
            for line in 0..self.lines() {
                let neighbours = self.neighbour_lines(line, own_all, other_all, &mut scratch);
                update(line, &mut own_all[line * h..(line + 1) * h], neighbours, &mut off);
            }
        } else {
            own_all.par_chunks_mut(h).enumerate().with_min_len(min_lines(self.shape[0])).for_each_init(
                || (vec![T::ZERO; h], <[Vec<T>; 4]>::default()),
                |(off, scratch), (line, own)| {
                    let neighbours = self.neighbour_lines(line, &[], other_all, scratch);
                    update(line, own, neighbours, off);
                },
            );
        }
    }

    /// First Gauss–Seidel sweep of `colour` from a zero initial guess: `x_P ← b_P / a_PP` on that colour (every
    /// neighbour is zero). The other colour is not touched; the next sweep overwrites it.
    pub fn smooth_from_zero(&self, colour: usize, x: &mut Split<T>, b: &Split<T>) {
        let (d, b) = (&self.colours[colour].diag, &b[colour]);
        x[colour].par_iter_mut().zip(b.par_iter()).zip(d.par_iter()).with_min_len(8192).for_each(
            |((x, &b), &d)| {
                *x = b / d;
            },
        );
    }

    /// Residual `b − A x` on the cells of `colour` of `line`, into `out[0..slots]`; returns the slot count.
    pub fn line_residual(
        &self,
        colour: usize,
        line: usize,
        x: &Split<T>,
        b: &Split<T>,
        scratch: &mut [Vec<T>; 4],
        out: &mut [T],
    ) -> usize {
        let h = self.half;
        let (own_all, other_all) = (&x[colour][..], &x[1 - colour][..]);
        let neighbours = self.neighbour_lines(line, own_all, other_all, scratch);
        let seg = line * h..(line + 1) * h;
        let own = &own_all[seg.clone()];
        let count = self.line_off_diagonal(colour, line, own, &other_all[seg.clone()], neighbours, out);
        let d = &self.colours[colour].diag[seg.clone()];
        let bl = &b[colour][seg];
        for m in 0..count {
            out[m] = bl[m] - (d[m] * own[m] + out[m]);
        }
        count
    }

    /// `r = b − A x` on every cell (split layout); padding slots stay zero.
    pub fn residual(&self, x: &Split<T>, b: &Split<T>, r: &mut Split<T>) {
        let h = self.half;
        for (colour, rc) in r.iter_mut().enumerate() {
            rc.par_chunks_mut(h).enumerate().with_min_len(min_lines(self.shape[0])).for_each_init(
                <[Vec<T>; 4]>::default,
                |scratch, (line, out)| {
                    let count = self.line_residual(colour, line, x, b, scratch, out);
                    out[count..].iter_mut().for_each(|v| *v = T::ZERO);
                },
            );
        }
    }

    /// Natural-order copy of a split vector.
    pub fn to_natural(&self, x: &Split<T>) -> Vec<T> {
        (0..self.cells())
            .map(|p| {
                let (c, s) = self.split_index(p);
                x[c][s]
            })
            .collect()
    }

    /// Split-layout copy of a natural-order vector.
    pub fn load_natural(&self, v: &[T], x: &mut Split<T>) {
        for (p, &value) in v.iter().enumerate() {
            let (c, s) = self.split_index(p);
            x[c][s] = value;
        }
    }
}

/// The own colour's array (mutable) and the other colour's (shared).
fn split_own_other<T>(x: &mut Split<T>, colour: usize) -> (&mut [T], &[T]) {
    let [red, black] = x;
    if colour == 0 {
        (&mut red[..], &black[..])
    } else {
        (&mut black[..], &red[..])
    }
}

#[inline]
fn other_all_line<T>(other_all: &[T], h: usize, line: usize) -> &[T] {
    &other_all[line * h..(line + 1) * h]
}

/// Number of cells of a line that start at `first` (0 or 1).
#[inline]
pub(crate) fn slots(nx: usize, first: usize) -> usize {
    (nx + 1 - first) / 2
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::stencil::Stencil7;
    use crate::linalg::test_problems::{random_operator, random_vector};

    /// Residuals in split layout equal the natural-order stencil's, for every periodicity and odd sizes.
    #[test]
    fn split_residual_equals_natural_stencil() {
        for (shape, periodic) in [
            ([6, 5, 4], [false, false, false]),
            ([7, 5, 3], [true, true, true]),
            ([2, 7, 3], [true, false, true]),
            ([1, 4, 4], [true, true, false]),
            ([5, 1, 6], [false, true, true]),
        ] {
            let mut op = random_operator(shape, periodic, 31);
            op.active[3] = false;
            crate::linalg::apply_operator::decouple_inactive_cells(&mut op);
            for scheme in [AdvectionScheme::Central, AdvectionScheme::Upwind] {
                let natural = Stencil7::assemble(&op, scheme);
                let split = ColouredStencil::<f64>::assemble(&op, scheme, 1.0);
                let n = natural.len();
                let xn = random_vector(n, 7);
                let bn = random_vector(n, 8);
                let mut ax = vec![0.0; n];
                natural.apply(&xn, &mut ax);
                let (mut x, mut b, mut r) = (split.zeros(), split.zeros(), split.zeros());
                split.load_natural(&xn, &mut x);
                split.load_natural(&bn, &mut b);
                split.residual(&x, &b, &mut r);
                let rn = split.to_natural(&r);
                for p in 0..n {
                    let expected = bn[p] - ax[p];
                    assert!(
                        (rn[p] - expected).abs() <= 1e-12 * (1.0 + expected.abs()),
                        "{shape:?} {periodic:?} {scheme:?} cell {p}: {} vs {expected}",
                        rn[p]
                    );
                }
            }
        }
    }
}
