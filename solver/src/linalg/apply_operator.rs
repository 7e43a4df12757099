//! Matrix-free product with a face-coupled operator, straight from its definition
//!
//! ```text
//! (A c)_P = Σ_faces f of P [ G_f (c_P − c_N) + Q_f,out · c_f ] + S_P c_P ,   inactive rows: (A c)_P = c_P
//! ```
//!
//! It reads face arrays instead of an assembled stencil, so the full-precision system needs no second copy of
//! its coefficients (the f64 stencil would cost 56 bytes per grid cell). Being written from the definition
//! rather than from [`super::stencil::face_coefficients`], it also cross-checks the assembly.
//!
//! Two forms share one line kernel, and so give the same bits:
//! - [`apply_face_coupled`] reads every conductance and sink from the operator's arrays;
//! - [`PackedOperator`] keeps the flux arrays only and stores the conductance of a full-aperture face and the
//!   sink of a plain fluid cell once: a grid cell is *regular* when it is active, has that sink and that
//!   conductance on all six faces, and only the irregular cells (cut cells, their neighbours, cells at chamber
//!   faces) carry their own values. The product then streams the three flux arrays, x and y, which is what
//!   varies from face to face (the advective part), and no conductance or sink array.

use super::operator::{AdvectionScheme, FaceCoupledOperator};
use super::real::wide_vectors;
use super::sparse_correction::SparseCorrection;
use super::stencil::{face_index, min_lines};
use rayon::prelude::*;

/// Flux `G (c_L − c_U) + F c_f` through a face from its lower cell L to its upper cell U (F > 0 from L to U).
/// Row L gains it, row U loses it: this is the face term `G (c_P − c_N) + Q_out c_f` of both rows.
#[inline(always)]
fn face_flux<const UPWIND: bool>(g: f64, f: f64, cl: f64, cu: f64) -> f64 {
    let face_value = if UPWIND {
        if f > 0.0 {
            cl
        } else {
            cu
        }
    } else {
        0.5 * (cl + cu)
    };
    g * (cl - cu) + f * face_value
}

/// `y = A x` for the operator under `scheme`. Faces touching an inactive cell must carry no coupling (the
/// operator's contract; [`super::SteadySolver::new`] enforces it).
pub fn apply_face_coupled(op: &FaceCoupledOperator, scheme: AdvectionScheme, x: &[f64], y: &mut [f64]) {
    match scheme {
        AdvectionScheme::Central => apply_with::<false>(op, x, y),
        AdvectionScheme::Upwind => apply_with::<true>(op, x, y),
    }
}

/// The y and z faces of an x-line, in the order the rows add them: lower y, upper y, lower z, upper z.
#[derive(Clone, Copy)]
struct Side {
    axis: usize,
    /// False across a non-periodic chamber face (no coupling).
    exists: bool,
    /// First grid cell of the neighbour line.
    neighbour: usize,
    /// First face between the two lines.
    face: usize,
}

/// Where the faces and neighbours of one x-line live.
struct LineFaces {
    base: usize,
    /// First x-face of the line (`nx + 1` per line; face 0 is the wrap-around face of a periodic x).
    x_face: usize,
    wrap_x: bool,
    sides: [Side; 4],
}

impl LineFaces {
    fn new(shape: [usize; 3], periodic: [bool; 3], line: usize) -> Self {
        let [nx, ny, nz] = shape;
        let (j, k) = (line % ny, line / ny);
        let base = line * nx;
        let plane = nx * ny;
        let wraps = [0, 1, 2].map(|a| periodic[a] && shape[a] > 1);
        let sides = [
            Side {
                axis: 1,
                exists: j > 0 || wraps[1],
                neighbour: if j > 0 { base - nx } else { base + nx * (ny - 1) },
                face: face_index(shape, 1, 0, j, k),
            },
            Side {
                axis: 1,
                exists: j + 1 < ny || wraps[1],
                neighbour: if j + 1 < ny { base + nx } else { base - nx * (ny - 1) },
                face: face_index(shape, 1, 0, if j + 1 < ny { j + 1 } else { 0 }, k),
            },
            Side {
                axis: 2,
                exists: k > 0 || wraps[2],
                neighbour: if k > 0 { base - plane } else { base + plane * (nz - 1) },
                face: base,
            },
            Side {
                axis: 2,
                exists: k + 1 < nz || wraps[2],
                neighbour: if k + 1 < nz { base + plane } else { base - plane * (nz - 1) },
                face: if k + 1 < nz { base + plane } else { nx * j },
            },
        ];
        LineFaces { base, x_face: face_index(shape, 0, 0, j, k), wrap_x: wraps[0], sides }
    }
}

/// Conductances, sinks and activity of one line's rows.
struct LineCoefficients<'a> {
    /// The line's `nx + 1` x-faces.
    x: &'a [f64],
    /// `nx` faces per side, in the order of [`LineFaces::sides`] (unread where the side does not exist).
    sides: [&'a [f64]; 4],
    sink: &'a [f64],
    /// None: every cell of the line is active.
    active: Option<&'a [bool]>,
}

impl<'a> LineCoefficients<'a> {
    /// The coefficients of the line `faces` describes, read from the operator's arrays.
    fn of(op: &'a FaceCoupledOperator, faces: &LineFaces) -> Self {
        let nx = op.shape[0];
        let base = faces.base;
        let side = |s: usize| {
            let d = faces.sides[s];
            if d.exists {
                &op.conductance[d.axis][d.face..d.face + nx]
            } else {
                &[][..]
            }
        };
        LineCoefficients {
            x: &op.conductance[0][faces.x_face..faces.x_face + nx + 1],
            sides: [side(0), side(1), side(2), side(3)],
            sink: &op.sink[base..base + nx],
            active: Some(&op.active[base..base + nx]),
        }
    }
}

/// `y = A x` on one x-line (`yl` is the line's part of y; `qx` a scratch of `nx + 1`). Each row adds its face
/// terms in one fixed order — x below, x above, y below, y above, z below, z above — so both forms of the
/// product give the same bits, and so do the two loops below (one pass where all four neighbour lines exist,
/// one pass per face direction along chamber walls).
#[inline(always)]
fn apply_line<const UPWIND: bool>(
    flux: &[Vec<f64>; 3],
    faces: &LineFaces,
    c: &LineCoefficients,
    x: &[f64],
    yl: &mut [f64],
    qx: &mut [f64],
) {
    let nx = yl.len();
    let xl = &x[faces.base..faces.base + nx];
    // x: face i lies between cells i − 1 and i; face 0 wraps between cell nx − 1 (lower) and cell 0 (upper).
    let (g, f) = (&c.x[..nx + 1], &flux[0][faces.x_face..faces.x_face + nx + 1]);
    let qx = &mut qx[..nx + 1];
    for i in 1..nx {
        qx[i] = face_flux::<UPWIND>(g[i], f[i], xl[i - 1], xl[i]);
    }
    let q_wrap = faces.wrap_x.then(|| face_flux::<UPWIND>(g[0], f[0], xl[nx - 1], xl[0]));
    if nx > 2 && faces.sides.iter().all(|s| s.exists) {
        apply_interior_line::<UPWIND>(flux, faces, c, x, yl, qx);
        // The two end cells, term by term in the same order.
        for i in [0, nx - 1] {
            let mut acc = c.sink[i] * xl[i];
            if i == 0 {
                acc += qx[1];
            } else {
                acc -= qx[nx - 1];
            }
            if let Some(q) = q_wrap {
                if i == 0 {
                    acc -= q;
                } else {
                    acc += q;
                }
            }
            for (s, side) in faces.sides.iter().enumerate() {
                let (g, f, xn) = (c.sides[s][i], flux[side.axis][side.face + i], x[side.neighbour + i]);
                if s % 2 == 0 {
                    acc -= face_flux::<UPWIND>(g, f, xn, xl[i]);
                } else {
                    acc += face_flux::<UPWIND>(g, f, xl[i], xn);
                }
            }
            yl[i] = acc;
        }
    } else {
        let sink = &c.sink[..nx];
        for i in 0..nx {
            yl[i] = sink[i] * xl[i];
        }
        if nx > 1 {
            yl[0] += qx[1];
            for i in 1..nx - 1 {
                yl[i] = yl[i] - qx[i] + qx[i + 1];
            }
            yl[nx - 1] -= qx[nx - 1];
        }
        if let Some(q) = q_wrap {
            yl[nx - 1] += q;
            yl[0] -= q;
        }
        // y and z: the faces below and above the line, each against a whole neighbour line.
        for (s, side) in faces.sides.iter().enumerate() {
            if !side.exists {
                continue;
            }
            let xn = &x[side.neighbour..side.neighbour + nx];
            let g = &c.sides[s][..nx];
            let f = &flux[side.axis][side.face..side.face + nx];
            if s % 2 == 0 {
                // Face below: the neighbour is the lower cell.
                for i in 0..nx {
                    yl[i] -= face_flux::<UPWIND>(g[i], f[i], xn[i], xl[i]);
                }
            } else {
                for i in 0..nx {
                    yl[i] += face_flux::<UPWIND>(g[i], f[i], xl[i], xn[i]);
                }
            }
        }
    }
    if let Some(active) = c.active {
        for i in 0..nx {
            if !active[i] {
                yl[i] = xl[i];
            }
        }
    }
}

/// The rows `1..nx − 1` of a line whose four neighbour lines exist, in one pass (`qx` holds the x-face fluxes).
#[inline(always)]
fn apply_interior_line<const UPWIND: bool>(
    flux: &[Vec<f64>; 3],
    faces: &LineFaces,
    c: &LineCoefficients,
    x: &[f64],
    yl: &mut [f64],
    qx: &[f64],
) {
    let nx = yl.len();
    let m = nx - 2;
    let at = |start: usize| &x[start + 1..start + 1 + m];
    let xl = &x[faces.base..faces.base + nx];
    let (xc, n) = (&xl[1..1 + m], faces.sides.map(|s| at(s.neighbour)));
    let f = faces.sides.map(|s| &flux[s.axis][s.face + 1..s.face + 1 + m]);
    let g = [0, 1, 2, 3].map(|s| &c.sides[s][1..1 + m]);
    let (sink, q_lo, q_hi) = (&c.sink[1..1 + m], &qx[1..1 + m], &qx[2..2 + m]);
    let out = &mut yl[1..1 + m];
    for i in 0..m {
        let mut acc = sink[i] * xc[i];
        acc = acc - q_lo[i] + q_hi[i];
        acc -= face_flux::<UPWIND>(g[0][i], f[0][i], n[0][i], xc[i]);
        acc += face_flux::<UPWIND>(g[1][i], f[1][i], xc[i], n[1][i]);
        acc -= face_flux::<UPWIND>(g[2][i], f[2][i], n[2][i], xc[i]);
        acc += face_flux::<UPWIND>(g[3][i], f[3][i], xc[i], n[3][i]);
        out[i] = acc;
    }
}

/// [`apply_line`] in AVX2 where `wide` (from [`wide_vectors`]) says the CPU has it.
#[inline(always)]
fn apply_line_dispatch<const UPWIND: bool>(
    wide: bool,
    flux: &[Vec<f64>; 3],
    faces: &LineFaces,
    c: &LineCoefficients,
    x: &[f64],
    yl: &mut [f64],
    qx: &mut [f64],
) {
    #[cfg(target_arch = "x86_64")]
    if wide {
        // SAFETY: `wide` comes from `wide_vectors`, true only when the CPU runs AVX2.
        unsafe { apply_line_avx2::<UPWIND>(flux, faces, c, x, yl, qx) };
        return;
    }
    let _ = wide;
    apply_line::<UPWIND>(flux, faces, c, x, yl, qx);
}

/// # Safety
/// The CPU must run AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn apply_line_avx2<const UPWIND: bool>(
    flux: &[Vec<f64>; 3],
    faces: &LineFaces,
    c: &LineCoefficients,
    x: &[f64],
    yl: &mut [f64],
    qx: &mut [f64],
) {
    apply_line::<UPWIND>(flux, faces, c, x, yl, qx);
}

fn check_lengths(shape: [usize; 3], x: &[f64], y: &[f64]) {
    let n = shape[0] * shape[1] * shape[2];
    assert_eq!(x.len(), n, "operator apply: x has the wrong length");
    assert_eq!(y.len(), n, "operator apply: y has the wrong length");
}

fn apply_with<const UPWIND: bool>(op: &FaceCoupledOperator, x: &[f64], y: &mut [f64]) {
    check_lengths(op.shape, x, y);
    let nx = op.shape[0];
    let wide = wide_vectors();
    y.par_chunks_mut(nx).with_min_len(min_lines(nx)).enumerate().for_each_init(
        || vec![0.0; nx + 1],
        |qx, (line, yl)| {
            let faces = LineFaces::new(op.shape, op.periodic, line);
            let coefficients = LineCoefficients::of(op, &faces);
            apply_line_dispatch::<UPWIND>(wide, &op.flux, &faces, &coefficients, x, yl, qx);
        },
    );
}

/// One irregular grid cell of a [`PackedOperator`]: its own conductances and sink.
#[derive(Clone, Copy, Debug)]
struct IrregularCell {
    /// Index along its x-line.
    i: u32,
    active: bool,
    /// Faces x below, x above, then the four sides in the order of [`LineFaces::sides`].
    conductance: [f64; 6],
    sink: f64,
}

/// The face-coupled operator without its conductance and sink arrays: the common values once, the irregular
/// cells' own values line by line (see the module documentation). Built from an operator whose faces touching
/// inactive cells carry no coupling; [`PackedOperator::apply`] takes that operator's flux arrays.
#[derive(Clone, Debug)]
pub struct PackedOperator {
    shape: [usize; 3],
    periodic: [bool; 3],
    /// The common conductance, `nx + 1` times (the coefficient slices of a regular line).
    regular_conductance: Vec<f64>,
    /// The common sink, `nx` times.
    regular_sink: Vec<f64>,
    /// Irregular cells of x-line l: `cells[line_start[l]..line_start[l + 1]]`, ascending along the line.
    line_start: Vec<usize>,
    cells: Vec<IrregularCell>,
    /// The conductances of the faces on the two chamber planes of each axis (faces 0 and n), in the order of
    /// [`plane_faces`]: the product never reads them, [`Self::unpack_coefficients`] gives them back.
    plane_conductance: [Vec<f64>; 3],
    /// The cut-cell correction, added line by line while the line's x and y are in cache.
    correction: SparseCorrection,
    /// Packed correction rows of x-line l: `correction_start[l]..correction_start[l + 1]`.
    correction_start: Vec<u32>,
}

/// The value most entries hold, if one holds more than half of them (Boyer–Moore majority vote, exact bits);
/// otherwise some entry (every cell is then irregular or nearly, and the product stays exact).
fn majority(values: impl Iterator<Item = f64>) -> f64 {
    let (mut candidate, mut count) = (0.0f64, 0usize);
    for v in values {
        if count == 0 {
            candidate = v;
            count = 1;
        } else if v.to_bits() == candidate.to_bits() {
            count += 1;
        } else {
            count -= 1;
        }
    }
    candidate
}

impl PackedOperator {
    /// Packs `op`. Faces touching an inactive cell must carry no coupling (the operator's contract).
    pub fn pack(op: &FaceCoupledOperator) -> Self {
        Self::pack_corrected(op, SparseCorrection::default())
    }

    /// Packs `op` plus the cut-cell correction `correction`: [`Self::apply`] then gives `(A + C) x`, the same bits
    /// as the face-coupled product followed by [`SparseCorrection::add_product`].
    pub fn pack_corrected(op: &FaceCoupledOperator, correction: SparseCorrection) -> Self {
        let [nx, ny, nz] = op.shape;
        let g0 = majority(op.conductance.iter().flat_map(|g| g.iter().copied()));
        let s0 = majority(op.sink.iter().copied());
        let lines: Vec<Vec<IrregularCell>> = (0..ny * nz)
            .into_par_iter()
            .with_min_len(min_lines(nx))
            .map(|line| {
                let faces = LineFaces::new(op.shape, op.periodic, line);
                let gx = &op.conductance[0][faces.x_face..faces.x_face + nx + 1];
                let mut irregular = Vec::new();
                for i in 0..nx {
                    let p = faces.base + i;
                    let below = if i > 0 || faces.wrap_x { gx[i] } else { g0 };
                    let above = if i + 1 < nx {
                        gx[i + 1]
                    } else if faces.wrap_x {
                        gx[0]
                    } else {
                        g0
                    };
                    let side = |s: usize| {
                        faces.sides[s]
                            .exists
                            .then(|| faces.sides[s])
                            .map_or(g0, |d| op.conductance[d.axis][d.face + i])
                    };
                    let conductance = [below, above, side(0), side(1), side(2), side(3)];
                    let regular = op.active[p]
                        && op.sink[p].to_bits() == s0.to_bits()
                        && conductance.iter().all(|g| g.to_bits() == g0.to_bits());
                    if !regular {
                        irregular.push(IrregularCell {
                            i: i as u32,
                            active: op.active[p],
                            conductance,
                            sink: op.sink[p],
                        });
                    }
                }
                irregular
            })
            .collect();
        let mut line_start = Vec::with_capacity(lines.len() + 1);
        line_start.push(0);
        let mut cells = Vec::with_capacity(lines.iter().map(Vec::len).sum());
        for l in lines {
            cells.extend_from_slice(&l);
            line_start.push(cells.len());
        }
        let correction_start = correction.block_starts(nx, op.sink.len());
        let plane_conductance =
            [0, 1, 2].map(|a| plane_faces(op.shape, a).map(|f| op.conductance[a][f]).collect());
        PackedOperator {
            shape: op.shape,
            periodic: op.periodic,
            regular_conductance: vec![g0; nx + 1],
            regular_sink: vec![s0; nx],
            line_start,
            cells,
            plane_conductance,
            correction,
            correction_start,
        }
    }

    /// Number of irregular grid cells (with their own conductances or sink).
    pub fn irregular_cells(&self) -> usize {
        self.cells.len()
    }

    /// Number of x-lines holding an irregular cell.
    pub fn irregular_lines(&self) -> usize {
        self.line_start.windows(2).filter(|w| w[0] < w[1]).count()
    }

    /// Bytes held, correction included (the flux arrays belong to the operator).
    pub fn memory_bytes(&self) -> usize {
        8 * (self.regular_conductance.len() + self.regular_sink.len() + self.line_start.len())
            + std::mem::size_of::<IrregularCell>() * self.cells.len()
            + self.correction.memory_bytes()
            + 4 * self.correction_start.len()
            + 8 * self.plane_conductance.iter().map(Vec::len).sum::<usize>()
    }

    /// The conductance and sink arrays of the operator this was packed from, bit for bit (a holder of the
    /// packed form may drop them while it solves).
    pub fn unpack_coefficients(&self) -> ([Vec<f64>; 3], Vec<f64>) {
        let [nx, ny, nz] = self.shape;
        let (g0, s0) = (self.regular_conductance[0], self.regular_sink[0]);
        let mut conductance = [0, 1, 2].map(|a| {
            let mut faces = self.shape;
            faces[a] += 1;
            vec![g0; faces[0] * faces[1] * faces[2]]
        });
        let mut sink = vec![s0; nx * ny * nz];
        for line in 0..ny * nz {
            let faces = LineFaces::new(self.shape, self.periodic, line);
            for cell in &self.cells[self.line_start[line]..self.line_start[line + 1]] {
                let i = cell.i as usize;
                sink[faces.base + i] = cell.sink;
                let [below, above, sides @ ..] = cell.conductance;
                if i > 0 || faces.wrap_x {
                    conductance[0][faces.x_face + i] = below;
                }
                if i + 1 < nx {
                    conductance[0][faces.x_face + i + 1] = above;
                } else if faces.wrap_x {
                    conductance[0][faces.x_face] = above;
                }
                for (side, g) in faces.sides.iter().zip(sides) {
                    if side.exists {
                        conductance[side.axis][side.face + i] = g;
                    }
                }
            }
        }
        for (a, saved) in self.plane_conductance.iter().enumerate() {
            for (f, &g) in plane_faces(self.shape, a).zip(saved) {
                conductance[a][f] = g;
            }
        }
        (conductance, sink)
    }

    /// The cut-cell correction packed with the operator.
    pub fn correction(&self) -> &SparseCorrection {
        &self.correction
    }

    /// `y = (A + C) x` under `scheme`, with the flux arrays of the operator this was packed from: the same bits
    /// as [`apply_face_coupled`] on that operator followed by the correction's [`SparseCorrection::add_product`].
    pub fn apply(&self, op: &FaceCoupledOperator, scheme: AdvectionScheme, x: &[f64], y: &mut [f64]) {
        assert_eq!(op.shape, self.shape, "packed operator applied with another operator's fluxes");
        match scheme {
            AdvectionScheme::Central => self.apply_with::<false>(&op.flux, x, y),
            AdvectionScheme::Upwind => self.apply_with::<true>(&op.flux, x, y),
        }
    }

    fn apply_with<const UPWIND: bool>(&self, flux: &[Vec<f64>; 3], x: &[f64], y: &mut [f64]) {
        check_lengths(self.shape, x, y);
        let nx = self.shape[0];
        let wide = wide_vectors();
        y.par_chunks_mut(nx).with_min_len(min_lines(nx)).enumerate().for_each_init(
            || LineScratch::new(self),
            |scratch, (line, yl)| {
                let faces = LineFaces::new(self.shape, self.periodic, line);
                let irregular = &self.cells[self.line_start[line]..self.line_start[line + 1]];
                if irregular.is_empty() {
                    let g = &self.regular_conductance[..nx];
                    let coefficients = LineCoefficients {
                        x: &self.regular_conductance,
                        sides: [g, g, g, g],
                        sink: &self.regular_sink,
                        active: None,
                    };
                    apply_line_dispatch::<UPWIND>(wide, flux, &faces, &coefficients, x, yl, &mut scratch.qx);
                } else {
                    scratch.load(&faces, irregular);
                    // Most lines with irregular cells (cut cells, chamber faces) have no inactive cell: no mask pass.
                    let masked = irregular.iter().any(|cell| !cell.active);
                    let LineScratch { x: gx, sides, sink, active, qx } = &mut *scratch;
                    let coefficients = LineCoefficients {
                        x: gx,
                        sides: [&sides[0], &sides[1], &sides[2], &sides[3]],
                        sink,
                        active: masked.then_some(&active[..]),
                    };
                    apply_line_dispatch::<UPWIND>(wide, flux, &faces, &coefficients, x, yl, qx);
                    scratch.unload(self, &faces, irregular);
                }
                let rows = self.correction_start[line] as usize..self.correction_start[line + 1] as usize;
                self.correction.add_rows(rows, faces.base, x, yl);
            },
        );
    }
}

/// The faces normal to `axis` on the chamber planes 0 and n of that axis (a fixed order).
fn plane_faces(shape: [usize; 3], axis: usize) -> impl Iterator<Item = usize> {
    let (b, c) = ((axis + 1) % 3, (axis + 2) % 3);
    [0, shape[axis]].into_iter().flat_map(move |at| {
        (0..shape[c]).flat_map(move |ic| {
            (0..shape[b]).map(move |ib| {
                let mut index = [0; 3];
                (index[axis], index[b], index[c]) = (at, ib, ic);
                face_index(shape, axis, index[0], index[1], index[2])
            })
        })
    })
}

/// The coefficients of one line with irregular cells, spread out for the line kernel.
struct LineScratch {
    x: Vec<f64>,
    sides: [Vec<f64>; 4],
    sink: Vec<f64>,
    active: Vec<bool>,
    qx: Vec<f64>,
}

impl LineScratch {
    /// Regular values throughout: [`Self::load`] writes one line's irregular cells over them and
    /// [`Self::unload`] puts the regular values back, so a line costs in proportion to its irregular cells.
    fn new(packed: &PackedOperator) -> Self {
        let nx = packed.regular_sink.len();
        LineScratch {
            x: packed.regular_conductance.clone(),
            sides: std::array::from_fn(|_| packed.regular_conductance[..nx].to_vec()),
            sink: packed.regular_sink.clone(),
            active: vec![true; nx],
            qx: vec![0.0; nx + 1],
        }
    }

    fn load(&mut self, faces: &LineFaces, irregular: &[IrregularCell]) {
        for cell in irregular {
            let [below, above, s0, s1, s2, s3] = cell.conductance;
            self.write(faces, cell.i as usize, [below, above], [s0, s1, s2, s3], cell.sink, cell.active);
        }
    }

    fn unload(&mut self, packed: &PackedOperator, faces: &LineFaces, irregular: &[IrregularCell]) {
        let (g, s) = (packed.regular_conductance[0], packed.regular_sink[0]);
        for cell in irregular {
            self.write(faces, cell.i as usize, [g, g], [g; 4], s, true);
        }
    }

    /// The coefficients of cell i: its x faces below and above (the one above is face 0 at a periodic wrap),
    /// its four side faces, sink and activity.
    #[inline]
    fn write(&mut self, faces: &LineFaces, i: usize, x: [f64; 2], sides: [f64; 4], sink: f64, active: bool) {
        let nx = self.sink.len();
        self.x[i] = x[0];
        if i + 1 < nx {
            self.x[i + 1] = x[1];
        } else if faces.wrap_x {
            self.x[0] = x[1];
        }
        for (side, g) in self.sides.iter_mut().zip(sides) {
            side[i] = g;
        }
        self.sink[i] = sink;
        self.active[i] = active;
    }
}

/// Zeroes conductance and flux on every coupling face (interior or periodic) that touches an inactive cell: the
/// faces below and above each inactive cell along each axis (the wrap-around face 0 at a periodic end).
pub(crate) fn decouple_inactive_cells(op: &mut FaceCoupledOperator) {
    let shape = op.shape;
    let [nx, ny, _] = shape;
    for p in (0..op.active.len()).filter(|&p| !op.active[p]) {
        let cell = [p % nx, (p / nx) % ny, p / (nx * ny)];
        for axis in 0..3 {
            let (na, coord) = (shape[axis], cell[axis]);
            if na < 2 {
                continue;
            }
            let wraps = op.periodic[axis];
            let at = |c: usize| {
                let mut index = cell;
                index[axis] = c;
                face_index(shape, axis, index[0], index[1], index[2])
            };
            // Face `coord` lies below the cell (face 0 only when it wraps); the face above is `coord + 1`, or
            // face 0 at the upper end of a periodic axis.
            let below = (coord > 0 || wraps).then(|| at(coord));
            let above = if coord + 1 < na { Some(at(coord + 1)) } else { wraps.then(|| at(0)) };
            for f in [below, above].into_iter().flatten() {
                op.conductance[axis][f] = 0.0;
                op.flux[axis][f] = 0.0;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::stencil::Stencil7;
    use crate::linalg::test_problems::{random_operator, random_vector};

    /// The matrix-free product (written from the definition) equals the assembled stencil's product.
    #[test]
    fn matrix_free_product_equals_assembled_stencil() {
        for (shape, periodic) in [
            ([6, 5, 4], [false, false, false]),
            ([6, 5, 4], [true, true, true]),
            ([2, 7, 3], [true, false, true]),
            ([1, 4, 4], [true, true, false]),
        ] {
            let mut op = random_operator(shape, periodic, 21);
            op.active[3] = false;
            op.active[10] = false;
            decouple_inactive_cells(&mut op);
            let x = random_vector(op.sink.len(), 5);
            for scheme in [AdvectionScheme::Central, AdvectionScheme::Upwind] {
                let mut y1 = vec![0.0; x.len()];
                let mut y2 = vec![0.0; x.len()];
                apply_face_coupled(&op, scheme, &x, &mut y1);
                Stencil7::assemble(&op, scheme).apply(&x, &mut y2);
                for p in 0..x.len() {
                    assert!(
                        (y1[p] - y2[p]).abs() < 1e-12 * (1.0 + y1[p].abs()),
                        "{shape:?} {scheme:?} row {p}"
                    );
                }
                assert_eq!(y1[3], x[3]);
            }
        }
    }

    /// The packed form gives the same bits as the full arrays: an operator whose conductances and sinks mostly
    /// take one value, with scattered other values, inactive cells, every periodicity and both schemes.
    #[test]
    fn packed_product_is_bit_identical_to_the_full_arrays() {
        for (shape, periodic) in [
            ([9, 6, 5], [false, false, false]),
            ([8, 6, 4], [true, true, true]),
            ([7, 5, 3], [true, false, true]),
            ([2, 7, 3], [true, true, false]),
            ([1, 4, 4], [false, true, true]),
        ] {
            let mut op = random_operator(shape, periodic, 23);
            let pick = random_vector(op.sink.len() + 3 * 400, 9);
            for (a, g) in op.conductance.iter_mut().enumerate() {
                for (f, g) in g.iter_mut().enumerate() {
                    if pick[(f * 7 + a * 13) % pick.len()] < 0.94 {
                        *g = 0.75;
                    }
                }
            }
            for (p, s) in op.sink.iter_mut().enumerate() {
                if pick[p] < 0.9 {
                    *s = 0.125;
                }
            }
            let n = op.sink.len();
            op.active[5] = false;
            op.active[n - 3] = false;
            decouple_inactive_cells(&mut op);
            let packed = PackedOperator::pack(&op);
            assert!(packed.irregular_cells() > 0, "{shape:?}: nothing irregular");
            assert!(packed.line_start.windows(2).any(|w| w[0] == w[1]), "{shape:?}: no regular line");
            let x = random_vector(op.sink.len(), 6);
            for scheme in [AdvectionScheme::Central, AdvectionScheme::Upwind] {
                let mut full = vec![0.0; x.len()];
                let mut lean = vec![1.0; x.len()];
                apply_face_coupled(&op, scheme, &x, &mut full);
                packed.apply(&op, scheme, &x, &mut lean);
                for p in 0..x.len() {
                    assert_eq!(full[p].to_bits(), lean[p].to_bits(), "{shape:?} {scheme:?} row {p}");
                }
            }
        }
    }

    /// Row p of `A x` term by term in the documented order (x below, x above, the wrap face, y below, y above,
    /// z below, z above), one row at a time: the reference for the bits of both line loops.
    fn row_by_definition(op: &FaceCoupledOperator, upwind: bool, x: &[f64], p: usize) -> f64 {
        let [nx, ny, nz] = op.shape;
        let (i, j, k) = (p % nx, (p / nx) % ny, p / (nx * ny));
        if !op.active[p] {
            return x[p];
        }
        let flux = |g: f64, f: f64, cl: f64, cu: f64| {
            if upwind {
                face_flux::<true>(g, f, cl, cu)
            } else {
                face_flux::<false>(g, f, cl, cu)
            }
        };
        let cell = |i: usize, j: usize, k: usize| x[i + nx * (j + ny * k)];
        let mut y = op.sink[p] * x[p];
        let fx = |i: usize| {
            (
                op.conductance[0][face_index(op.shape, 0, i, j, k)],
                op.flux[0][face_index(op.shape, 0, i, j, k)],
            )
        };
        if nx > 1 {
            if i > 0 {
                let (g, f) = fx(i);
                y -= flux(g, f, cell(i - 1, j, k), x[p]);
            }
            if i + 1 < nx {
                let (g, f) = fx(i + 1);
                y += flux(g, f, x[p], cell(i + 1, j, k));
            }
        }
        if op.periodic[0] && nx > 1 {
            let (g, f) = fx(0);
            let q = flux(g, f, cell(nx - 1, j, k), cell(0, j, k));
            if i == nx - 1 {
                y += q;
            }
            if i == 0 {
                y -= q;
            }
        }
        for axis in [1, 2] {
            let (n, c) = ([nx, ny, nz][axis], [i, j, k][axis]);
            let wraps = op.periodic[axis] && n > 1;
            let at = |c: usize| {
                if axis == 1 {
                    (cell(i, c, k), face_index(op.shape, 1, i, c, k))
                } else {
                    (cell(i, j, c), face_index(op.shape, 2, i, j, c))
                }
            };
            if c > 0 || wraps {
                let (xn, _) = at(if c > 0 { c - 1 } else { n - 1 });
                let (_, face) = at(c);
                y -= flux(op.conductance[axis][face], op.flux[axis][face], xn, x[p]);
            }
            if c + 1 < n || wraps {
                let (xn, _) = at(if c + 1 < n { c + 1 } else { 0 });
                let (_, face) = at(if c + 1 < n { c + 1 } else { 0 });
                y += flux(op.conductance[axis][face], op.flux[axis][face], x[p], xn);
            }
        }
        y
    }

    /// Both line loops (one pass inside, one pass per face direction along walls) give the bits of the rows
    /// summed term by term, for every periodicity, with inactive cells.
    #[test]
    fn line_loops_sum_each_row_in_the_documented_order() {
        for (shape, periodic) in [
            ([9, 6, 5], [false, false, false]),
            ([8, 6, 4], [true, true, true]),
            ([7, 5, 3], [true, false, true]),
            ([2, 7, 3], [true, true, false]),
            ([3, 4, 4], [false, true, true]),
        ] {
            let mut op = random_operator(shape, periodic, 27);
            op.active[4] = false;
            decouple_inactive_cells(&mut op);
            let x = random_vector(op.sink.len(), 12);
            for (scheme, upwind) in [(AdvectionScheme::Central, false), (AdvectionScheme::Upwind, true)] {
                let mut y = vec![0.0; x.len()];
                apply_face_coupled(&op, scheme, &x, &mut y);
                for (p, got) in y.iter().enumerate() {
                    let want = row_by_definition(&op, upwind, &x, p);
                    assert_eq!(got.to_bits(), want.to_bits(), "{shape:?} {periodic:?} {scheme:?} row {p}");
                }
            }
        }
    }

    /// The correction fused line by line into the packed product gives the same bits as the face-coupled product
    /// followed by the correction's own product (rows on several lines, some lines without any).
    #[test]
    fn fused_correction_is_bit_identical_to_a_separate_pass() {
        let (shape, periodic) = ([9, 6, 5], [false, true, false]);
        let op = random_operator(shape, periodic, 29);
        let n = op.sink.len();
        let mut triplets = sprs::TriMat::new((n, n));
        for k in 0..60usize {
            let row = (k * 37) % n;
            for j in 0..(1 + k % 5) {
                triplets.add_triplet(row, (row + 11 * j + k) % n, ((k + 3 * j) as f64).cos());
            }
        }
        let correction = SparseCorrection::pack(&triplets.to_csr());
        let packed = PackedOperator::pack_corrected(&op, correction.clone());
        let x = random_vector(n, 4);
        for scheme in [AdvectionScheme::Central, AdvectionScheme::Upwind] {
            let mut separate = vec![0.0; n];
            apply_face_coupled(&op, scheme, &x, &mut separate);
            correction.add_product(&x, &mut separate);
            let mut fused = vec![0.0; n];
            packed.apply(&op, scheme, &x, &mut fused);
            for p in 0..n {
                assert_eq!(separate[p].to_bits(), fused[p].to_bits(), "{scheme:?} row {p}");
            }
        }
    }

    /// Unpacking gives back the conductance and sink arrays bit for bit (chamber planes, periodic wrap faces and
    /// faces of inactive cells included).
    #[test]
    fn unpacked_coefficients_are_the_packed_ones() {
        for (shape, periodic) in [
            ([9, 6, 5], [false, false, false]),
            ([8, 6, 4], [true, true, true]),
            ([7, 5, 3], [true, false, true]),
            ([1, 4, 4], [false, true, true]),
        ] {
            let mut op = random_operator(shape, periodic, 33);
            for g in op.conductance.iter_mut() {
                for (f, g) in g.iter_mut().enumerate() {
                    if f % 5 != 0 {
                        *g = 0.5;
                    }
                }
            }
            op.sink.iter_mut().step_by(2).for_each(|s| *s = 0.25);
            op.active[7] = false;
            decouple_inactive_cells(&mut op);
            let (conductance, sink) = PackedOperator::pack(&op).unpack_coefficients();
            let bits = |v: &[f64]| v.iter().map(|g| g.to_bits()).collect::<Vec<_>>();
            for (a, (unpacked, given)) in conductance.iter().zip(&op.conductance).enumerate() {
                assert_eq!(bits(unpacked), bits(given), "{shape:?} axis {a}");
            }
            assert_eq!(bits(&sink), bits(&op.sink), "{shape:?}");
        }
    }

    /// Decoupling zeroes exactly the coupling faces (interior and wrap-around) with an inactive cell on either
    /// side, checked face by face against both cells of each face, for every periodicity.
    #[test]
    fn decoupling_zeroes_exactly_the_faces_of_inactive_cells() {
        for (shape, periodic) in [
            ([6, 5, 4], [false, false, false]),
            ([6, 5, 4], [true, true, true]),
            ([2, 7, 3], [true, false, true]),
            ([1, 4, 4], [true, true, false]),
        ] {
            let mut op = random_operator(shape, periodic, 41);
            let n = op.sink.len();
            for p in [0, 3, 10, n / 2, n - 1] {
                op.active[p] = false;
            }
            let given = op.clone();
            decouple_inactive_cells(&mut op);
            let [nx, ny, _] = shape;
            for axis in 0..3 {
                let mut faces = shape;
                faces[axis] += 1;
                for k in 0..faces[2] {
                    for j in 0..faces[1] {
                        for i in 0..faces[0] {
                            let f = face_index(shape, axis, i, j, k);
                            let (na, c) = (shape[axis], [i, j, k][axis]);
                            let cell = |c: usize| {
                                let mut at = [i, j, k];
                                at[axis] = c;
                                at[0] + nx * (at[1] + ny * at[2])
                            };
                            let pair = if na < 2 || c == na || (c == 0 && !periodic[axis]) {
                                None
                            } else if c == 0 {
                                Some((cell(na - 1), cell(0)))
                            } else {
                                Some((cell(c - 1), cell(c)))
                            };
                            let cut = pair.is_some_and(|(l, u)| !given.active[l] || !given.active[u]);
                            let want = |v: f64| if cut { 0.0 } else { v };
                            assert_eq!(
                                op.conductance[axis][f],
                                want(given.conductance[axis][f]),
                                "{shape:?} {axis} {f}"
                            );
                            assert_eq!(op.flux[axis][f], want(given.flux[axis][f]), "{shape:?} {axis} {f}");
                        }
                    }
                }
            }
        }
    }

    /// The AVX2 build of the line kernel gives the same bits as the baseline build.
    #[cfg(target_arch = "x86_64")]
    #[test]
    fn wide_and_baseline_line_kernels_agree_bit_for_bit() {
        if !wide_vectors() {
            return;
        }
        let op = random_operator([37, 6, 5], [true, false, true], 3);
        let x = random_vector(op.sink.len(), 8);
        let nx = op.shape[0];
        let mut qx = vec![0.0; nx + 1];
        for line in 0..op.shape[1] * op.shape[2] {
            let faces = LineFaces::new(op.shape, op.periodic, line);
            let c = LineCoefficients::of(&op, &faces);
            let (mut narrow, mut wide) = (vec![0.0; nx], vec![0.0; nx]);
            apply_line_dispatch::<false>(false, &op.flux, &faces, &c, &x, &mut narrow, &mut qx);
            apply_line_dispatch::<false>(true, &op.flux, &faces, &c, &x, &mut wide, &mut qx);
            assert!(narrow.iter().zip(&wide).all(|(a, b)| a.to_bits() == b.to_bits()), "line {line}");
        }
    }
}
