//! The momentum block of one component in compact form, for the matrix-free product of the coupled system.
//!
//! Row P (see [`super::assemble_momentum`]):
//!
//! ```text
//! (A u)_P = S_P u_P + Σ_links G (u_P − u_N) + s h² (p_high − p_low)
//! ```
//!
//! Every link conductance is `μ_e A/h` with A = h² or, between the half volumes of an outlet plane, h²/2, so a
//! row needs only one byte: bit a (a < 3) says the link to the upper neighbour along a is coupled, bit 3 + a
//! that it has the half area, bit 6 that the row is an unknown, bit 7 that its diagonal sink is not the bulk
//! value `σ h³` (cut links, half volumes) and is stored (f64, in row order, found from each grid line's first).
//! That is about one byte per unknown instead of the 57 of the face arrays, and one pass reads each neighbour
//! once.

use super::assemble_momentum::MomentumBlock;
use crate::linalg::real::Real;
use rayon::prelude::*;

const ACTIVE: u8 = 1 << 6;
/// The row's sink is stored in `irregular_sink`.
const IRREGULAR: u8 = 1 << 7;

/// One component's rows: shape, periodicity, link bytes, the sinks that are not the bulk value and the two
/// conductance values.
pub struct MomentumRows {
    pub shape: [usize; 3],
    periodic: [bool; 3],
    links: Vec<u8>,
    /// Sink of an active row in the bulk: `σ h³` as the assembly computes it.
    regular_sink: f64,
    /// Sinks of the rows marked [`IRREGULAR`], in row order.
    irregular_sink: Vec<f64>,
    /// Index in `irregular_sink` of the first irregular row of each grid line along x.
    line_start: Vec<usize>,
    /// `[0, μ_e h²/h, 0, μ_e (h²/2)/h]` (conductances computed as the assembly does), indexed by a link bit and
    /// its half-area bit.
    table: [f64; 4],
}

/// Where the links of the rows of one x-line go: [`MomentumRows::links_of`].
pub struct LineLinks {
    line: usize,
    /// Neighbour lines `[y above, y below, z above, z below]`, the line itself where there is none.
    lines: [usize; 4],
    /// 1 where the lower line along y (index 0) and z (index 1) exists, else 0.
    lower: [f64; 2],
}

/// Where the grid-cell pressures of a component's unknowns are: the high cell of unknown `(i, j, k)` is grid
/// cell `(i, j, k)` when `i_c < n_c`; the low cell is one step down along c (wrapped when periodic).
#[derive(Clone, Copy)]
pub struct PressureStencil {
    /// Grid shape.
    pub grid_shape: [usize; 3],
    /// `s h²`.
    pub coefficient: f64,
}

impl MomentumRows {
    /// The compact rows of `block`; `effective_viscosity`, `resistivity` and `h` reproduce its conductances and
    /// bulk sink bit for bit. Returns None if a conductance is not one of the two values (the assembly changed
    /// without this file).
    pub fn new(block: &MomentumBlock, effective_viscosity: f64, resistivity: f64, h: f64) -> Option<Self> {
        let op = &block.operator;
        let shape = op.shape;
        let full = effective_viscosity * (h * h) / h;
        let half = effective_viscosity * (0.5 * h * h) / h;
        let regular_sink = resistivity * h.powi(3);
        let mut links = vec![0u8; op.sink.len()];
        let encoded = links.par_iter_mut().enumerate().all(|(p, byte)| {
            let ijk = [p % shape[0], (p / shape[0]) % shape[1], p / (shape[0] * shape[1])];
            if op.active[p] {
                *byte |= ACTIVE;
                if op.sink[p].to_bits() != regular_sink.to_bits() {
                    *byte |= IRREGULAR;
                }
            }
            for a in 0..3 {
                let upper = if ijk[a] + 1 < shape[a] {
                    ijk[a] + 1
                } else if op.periodic[a] {
                    0
                } else {
                    continue;
                };
                let mut f = ijk;
                f[a] = upper;
                let mut s = shape;
                s[a] += 1;
                let g = op.conductance[a][f[0] + s[0] * (f[1] + s[1] * f[2])];
                if g == 0.0 {
                    continue;
                }
                if g == full {
                    *byte |= 1 << a;
                } else if g == half {
                    *byte |= (1 << a) | (1 << (3 + a));
                } else {
                    return false;
                }
            }
            true
        });
        if !encoded {
            return None;
        }
        let irregular_sink: Vec<f64> =
            links.iter().zip(&op.sink).filter(|(&byte, _)| byte & IRREGULAR != 0).map(|(_, &s)| s).collect();
        let mut line_start = Vec::with_capacity(shape[1] * shape[2]);
        let mut count = 0;
        for line in links.chunks(shape[0].max(1)) {
            line_start.push(count);
            count += line.iter().filter(|&&byte| byte & IRREGULAR != 0).count();
        }
        Some(MomentumRows {
            shape,
            periodic: op.periodic,
            links,
            regular_sink,
            irregular_sink,
            line_start,
            table: [0.0, full, 0.0, half],
        })
    }

    pub fn len(&self) -> usize {
        self.links.len()
    }

    pub fn is_empty(&self) -> bool {
        self.links.is_empty()
    }

    pub fn is_active(&self, p: usize) -> bool {
        self.links[p] & ACTIVE != 0
    }

    pub fn memory_bytes(&self) -> usize {
        self.links.len() + 8 * (self.irregular_sink.len() + self.line_start.len())
    }

    /// Conductance of the upper link along `a` from a row's byte (0 if not coupled), without a branch: the link
    /// and half-area bits of axis a index `[0, full, 0, half]`.
    #[inline(always)]
    fn upper(&self, byte: u8, a: usize) -> f64 {
        self.table[(((byte >> a) & 1) | ((byte >> (2 + a)) & 2)) as usize]
    }

    /// `y = A_c u + s G_c p` on the unknowns of component `c`; identity rows (`y = u`) where inactive.
    /// `pressure` is the scaled pressure p̃ on the grid cells; `sign = −1` gives `y = r − s G_c p` instead when
    /// `u` is None and `y` holds r on entry (the preconditioner's right-hand side). Vectors of f64 or f32 (the
    /// inner solve of the refinement); the sums run in f64 either way.
    pub fn apply<T: Real>(
        &self,
        c: usize,
        u: Option<&[T]>,
        pressure: &[T],
        stencil: PressureStencil,
        y: &mut [T],
    ) {
        let [sx, sy, _] = self.shape;
        let [nx, ny, nz] = stencil.grid_shape;
        let n_c = stencil.grid_shape[c];
        let g = stencil.coefficient;
        y.par_chunks_mut(sx).enumerate().with_min_len(16).for_each(|(line, yl)| {
            let (j, k) = (line % sy, line / sy);
            let base = line * sx;
            let lines = self.neighbour_lines(line);
            let mut irregular = self.line_sinks(line);
            for (i, yi) in yl.iter_mut().enumerate() {
                let p = base + i;
                let byte = self.links[p];
                let Some(u) = u else {
                    // Right-hand-side form: y = r − s G p on active rows, r kept elsewhere.
                    if byte & ACTIVE != 0 {
                        let difference = self.pressure_difference(c, [i, j, k], [nx, ny, nz], n_c, pressure);
                        *yi = T::from_f64((*yi).to_f64() - g * difference);
                    }
                    continue;
                };
                if byte & ACTIVE == 0 {
                    *yi = u[p];
                    continue;
                }
                let up = u[p].to_f64();
                let mut acc = self.sink(byte, &mut irregular) * up;
                self.for_each_link(line, i, byte, &lines, |lq, iq, gq| {
                    acc += gq * (up - u[lq * sx + iq].to_f64())
                });
                *yi = T::from_f64(
                    acc + g * self.pressure_difference(c, [i, j, k], [nx, ny, nz], n_c, pressure),
                );
            }
        });
    }

    /// Whether `byte` (a row's link byte) marks an unknown.
    #[inline]
    pub fn byte_is_active(byte: u8) -> bool {
        byte & ACTIVE != 0
    }

    /// The link byte of row `p`.
    #[inline]
    pub fn byte(&self, p: usize) -> u8 {
        self.links[p]
    }

    /// The stored sinks of x-line `line`, in row order, for [`Self::sink`].
    #[inline]
    pub fn line_sinks(&self, line: usize) -> std::slice::Iter<'_, f64> {
        self.irregular_sink[self.line_start[line]..].iter()
    }

    /// Diagonal sink of an active row with link byte `byte`; `irregular` is the line's [`Self::line_sinks`],
    /// advanced past the rows before this one (every row with an irregular sink must pass through here in order).
    #[inline]
    pub fn sink(&self, byte: u8, irregular: &mut std::slice::Iter<'_, f64>) -> f64 {
        if byte & IRREGULAR != 0 {
            irregular.next().copied().unwrap_or(self.regular_sink)
        } else {
            self.regular_sink
        }
    }

    /// Whether the row's sink is stored (so [`Self::sink`] must see it to keep the line's sinks in step).
    #[inline]
    pub fn byte_has_stored_sink(byte: u8) -> bool {
        byte & IRREGULAR != 0
    }

    /// The neighbour lines of x-line `line` for [`Self::links_of`].
    pub fn line_links(&self, line: usize) -> LineLinks {
        let [ylo, yhi, zlo, zhi] = self.neighbour_lines(line);
        let or_own = |l: Option<usize>| l.unwrap_or(line);
        LineLinks {
            line,
            lines: [or_own(yhi), or_own(ylo), or_own(zhi), or_own(zlo)],
            lower: [f64::from(u8::from(ylo.is_some())), f64::from(u8::from(zlo.is_some()))],
        }
    }

    /// The six links of active row `i` of the line of `ll` (link byte `byte`), without branches: conductances
    /// (0 for an uncoupled link) and neighbour positions `(line, i)` (a valid position even where the
    /// conductance is 0), in the order x above, x below, y above, y below, z above, z below.
    #[inline(always)]
    pub fn links_of(&self, ll: &LineLinks, i: usize, byte: u8) -> ([f64; 6], [(usize, usize); 6]) {
        let sx = self.shape[0];
        let line = ll.line;
        let above_x = if i + 1 < sx { i + 1 } else { 0 };
        let (below_x, has_below_x) = if i > 0 {
            (i - 1, 1.0)
        } else if self.periodic[0] && sx > 1 {
            (sx - 1, 1.0)
        } else {
            (i, 0.0)
        };
        let [ya, yb, za, zb] = ll.lines;
        let g = [
            self.upper(byte, 0),
            has_below_x * self.upper(self.links[line * sx + below_x], 0),
            self.upper(byte, 1),
            ll.lower[0] * self.upper(self.links[yb * sx + i], 1),
            self.upper(byte, 2),
            ll.lower[1] * self.upper(self.links[zb * sx + i], 2),
        ];
        (g, [(line, above_x), (line, below_x), (ya, i), (yb, i), (za, i), (zb, i)])
    }

    /// The diagonal sinks of the rows of x-line `line` into `out` (length n_x; 0 on inactive rows).
    pub fn line_sink_values(&self, line: usize, out: &mut [f64]) {
        let sx = self.shape[0];
        let mut sinks = self.line_sinks(line);
        for (o, &byte) in out.iter_mut().zip(&self.links[line * sx..(line + 1) * sx]) {
            *o = if byte & ACTIVE != 0 { self.sink(byte, &mut sinks) } else { 0.0 };
        }
    }

    /// The x-lines next to x-line `line` along y and z: `[y below, y above, z below, z above]` (None across a
    /// non-periodic boundary).
    pub fn neighbour_lines(&self, line: usize) -> [Option<usize>; 4] {
        let [_, sy, sz] = self.shape;
        let (j, k) = (line % sy, line / sy);
        let step = |idx: usize, size: usize, up: bool, per: bool| -> Option<usize> {
            if up {
                if idx + 1 < size {
                    Some(idx + 1)
                } else if per && size > 1 {
                    Some(0)
                } else {
                    None
                }
            } else if idx > 0 {
                Some(idx - 1)
            } else if per && size > 1 {
                Some(size - 1)
            } else {
                None
            }
        };
        let periodic = self.periodic;
        [
            step(j, sy, false, periodic[1]).map(|jj| jj + sy * k),
            step(j, sy, true, periodic[1]).map(|jj| jj + sy * k),
            step(k, sz, false, periodic[2]).map(|kk| j + sy * kk),
            step(k, sz, true, periodic[2]).map(|kk| j + sy * kk),
        ]
    }

    /// Calls `link(line_q, i_q, G)` for every coupled link of row `i` of x-line `line` (link byte `byte`, neighbour
    /// lines from [`Self::neighbour_lines`]): the upper then the lower neighbour along x, y and z. Links join
    /// unknowns only, so the neighbour is always an unknown.
    #[inline(always)]
    pub fn for_each_link(
        &self,
        line: usize,
        i: usize,
        byte: u8,
        lines: &[Option<usize>; 4],
        mut link: impl FnMut(usize, usize, f64),
    ) {
        let sx = self.shape[0];
        let gx = self.upper(byte, 0);
        if gx != 0.0 {
            link(line, if i + 1 < sx { i + 1 } else { 0 }, gx);
        }
        let lower_x = if i > 0 {
            Some(i - 1)
        } else if self.periodic[0] && sx > 1 {
            Some(sx - 1)
        } else {
            None
        };
        if let Some(q) = lower_x {
            let gq = self.upper(self.links[line * sx + q], 0);
            if gq != 0.0 {
                link(line, q, gq);
            }
        }
        for a in 1..3 {
            let (lo, hi) = (lines[2 * a - 2], lines[2 * a - 1]);
            let ga = self.upper(byte, a);
            if ga != 0.0 {
                if let Some(l) = hi {
                    link(l, i, ga);
                }
            }
            if let Some(l) = lo {
                let gq = self.upper(self.links[l * sx + i], a);
                if gq != 0.0 {
                    link(l, i, gq);
                }
            }
        }
    }

    /// `p_high − p_low` across unknown `ijk` of component c (0 beyond a chamber face).
    #[inline]
    fn pressure_difference<T: Real>(
        &self,
        c: usize,
        ijk: [usize; 3],
        grid_shape: [usize; 3],
        n_c: usize,
        pressure: &[T],
    ) -> f64 {
        let index = |q: [usize; 3]| q[0] + grid_shape[0] * (q[1] + grid_shape[1] * q[2]);
        let i = ijk[c];
        let high = if i < n_c { pressure[index(ijk)].to_f64() } else { 0.0 };
        let low = if i >= 1 {
            let mut q = ijk;
            q[c] = i - 1;
            pressure[index(q)].to_f64()
        } else if self.periodic[c] {
            let mut q = ijk;
            q[c] = n_c - 1;
            pressure[index(q)].to_f64()
        } else {
            0.0
        };
        high - low
    }
}

#[cfg(test)]
mod tests {
    use super::super::assemble_momentum::{assemble_momentum, MomentumCoefficients};
    use super::super::chamber_velocity::ChamberVelocity;
    use super::super::pressure_gradient::PressureCoupling;
    use super::super::sphere_index::SphereIndex;
    use super::*;
    use crate::linalg::{apply_face_coupled, AdvectionScheme};
    use crate::problem::{ChamberBoundaries, ChamberFace};
    use mesh::{Cell, Grid, Layout};
    use std::sync::Arc;

    /// The compact product equals the face-array product plus the coupling's gradient, bit for bit up to
    /// rounding, with an outlet (half volumes), walls, a periodic axis and two cut spheres.
    #[test]
    fn compact_rows_reproduce_the_assembled_block() {
        let grid = Grid::new([0.0; 3], 0.1, [9, 8, 7]);
        let layout = Layout {
            cells: vec![
                Cell { id: 0, centre: [0.33, 0.41, 0.2], radius: 0.17, secretion_rate: 0.0 },
                Cell { id: 1, centre: [0.7, 0.3, 0.6], radius: 0.12, secretion_rate: 0.0 },
            ],
        };
        let boundaries = ChamberBoundaries::new([
            [ChamberFace::Inlet, ChamberFace::Outlet],
            [ChamberFace::Wall, ChamberFace::Symmetry],
            [ChamberFace::Periodic; 2],
        ]);
        let periodic = boundaries.periodic_axes();
        let spheres = SphereIndex::new(&grid, &layout, periodic);
        let inlet = [[Some(vec![1.0; 8 * 7]), None], [None, None], [None, None]];
        let chamber = ChamberVelocity::new(&grid, boundaries, inlet, Arc::new(|_| [1.0, 0.0, 0.0]));
        let coefficients = MomentumCoefficients {
            effective_viscosity: 1.7,
            resistivity: 3.0,
            driving_gradient: 0.0,
            min_wall_fraction: 0.05,
        };
        let blocks = [0, 1, 2].map(|c| assemble_momentum(&grid, c, &chamber, &spheres, &coefficients));
        let coupling = PressureCoupling::new(
            &grid,
            [0, 1, 2].map(|c| blocks[c].component.clone()),
            [0, 1, 2].map(|c| blocks[c].operator.active.clone()),
        );
        let pressure: Vec<f64> = (0..grid.len()).map(|n| ((n * 37) % 11) as f64 - 5.0).collect();
        let scale = 2.5;
        for (c, block) in blocks.iter().enumerate() {
            let rows = MomentumRows::new(block, 1.7, 3.0, 0.1).expect("two conductance values");
            let n = rows.len();
            let u: Vec<f64> = (0..n).map(|p| ((p * 13) % 7) as f64 * 0.3 - 1.0).collect();
            let mut expected = vec![0.0; n];
            apply_face_coupled(&block.operator, AdvectionScheme::Central, &u, &mut expected);
            let mut grad = vec![0.0; n];
            coupling.gradient(c, &pressure, scale, &mut grad);
            expected.iter_mut().zip(&grad).for_each(|(e, g)| *e += g);
            let stencil = PressureStencil { grid_shape: grid.shape, coefficient: scale * grid.face_area() };
            let mut y = vec![0.0; n];
            rows.apply(c, Some(&u), &pressure, stencil, &mut y);
            for p in 0..n {
                assert!((y[p] - expected[p]).abs() <= 1e-12 * (1.0 + expected[p].abs()), "c {c} p {p}");
            }
            let r: Vec<f64> = (0..n).map(|p| p as f64).collect();
            let mut t = r.clone();
            rows.apply(c, None, &pressure, stencil, &mut t);
            for p in 0..n {
                assert!((t[p] - (r[p] - grad[p])).abs() <= 1e-12 * (1.0 + r[p].abs()), "c {c} p {p}");
            }
        }
    }
}
