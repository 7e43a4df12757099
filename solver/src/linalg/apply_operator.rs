//! Matrix-free product with a face-coupled operator, straight from its definition
//!
//! ```text
//! (A c)_P = Σ_faces f of P [ G_f (c_P − c_N) + Q_f,out · c_f ] + S_P c_P ,   inactive rows: (A c)_P = c_P
//! ```
//!
//! It reads the operator's face arrays instead of an assembled stencil, so the full-precision system needs no
//! second copy of its coefficients (the f64 stencil would cost 56 bytes per grid cell). Being written from the
//! definition rather than from [`super::stencil::face_coefficients`], it also cross-checks the assembly.

use super::operator::{AdvectionScheme, FaceCoupledOperator};
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

fn apply_with<const UPWIND: bool>(op: &FaceCoupledOperator, x: &[f64], y: &mut [f64]) {
    let [nx, ny, nz] = op.shape;
    let n = nx * ny * nz;
    assert_eq!(x.len(), n, "operator apply: x has the wrong length");
    assert_eq!(y.len(), n, "operator apply: y has the wrong length");
    let wraps = [0, 1, 2].map(|a| op.periodic[a] && op.shape[a] > 1);
    let plane = nx * ny;
    y.par_chunks_mut(nx).with_min_len(min_lines(nx)).enumerate().for_each(|(line, yl)| {
        let j = line % ny;
        let k = line / ny;
        let base = line * nx;
        let xl = &x[base..base + nx];
        let sink = &op.sink[base..base + nx];
        for i in 0..nx {
            yl[i] = sink[i] * xl[i];
        }
        // x: faces 1..nx−1 inside the line, face 0 wraps between cell nx−1 (lower) and cell 0 (upper).
        let xf = face_index(op.shape, 0, 0, j, k);
        let (g, f) = (&op.conductance[0][xf..xf + nx + 1], &op.flux[0][xf..xf + nx + 1]);
        for i in 1..nx {
            let q = face_flux::<UPWIND>(g[i], f[i], xl[i - 1], xl[i]);
            yl[i - 1] += q;
            yl[i] -= q;
        }
        if wraps[0] {
            let q = face_flux::<UPWIND>(g[0], f[0], xl[nx - 1], xl[0]);
            yl[nx - 1] += q;
            yl[0] -= q;
        }
        // y and z: the faces below and above the line, each against a whole neighbour line.
        let neighbour_lines = [
            (
                1,
                j > 0 || wraps[1],
                if j > 0 { base - nx } else { base + nx * (ny - 1) },
                face_index(op.shape, 1, 0, j, k),
            ),
            (
                1,
                j + 1 < ny || wraps[1],
                if j + 1 < ny { base + nx } else { base - nx * (ny - 1) },
                face_index(op.shape, 1, 0, if j + 1 < ny { j + 1 } else { 0 }, k),
            ),
            (2, k > 0 || wraps[2], if k > 0 { base - plane } else { base + plane * (nz - 1) }, base),
            (
                2,
                k + 1 < nz || wraps[2],
                if k + 1 < nz { base + plane } else { base - plane * (nz - 1) },
                if k + 1 < nz { base + plane } else { nx * j },
            ),
        ];
        for (side, &(axis, exists, neighbour, face)) in neighbour_lines.iter().enumerate() {
            if !exists {
                continue;
            }
            let xn = &x[neighbour..neighbour + nx];
            let g = &op.conductance[axis][face..face + nx];
            let f = &op.flux[axis][face..face + nx];
            if side % 2 == 0 {
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
        let active = &op.active[base..base + nx];
        for i in 0..nx {
            if !active[i] {
                yl[i] = xl[i];
            }
        }
    });
}

/// Zeroes conductance and flux on every coupling face (interior or periodic) that touches an inactive cell.
pub(crate) fn decouple_inactive_cells(op: &mut FaceCoupledOperator) {
    let shape = op.shape;
    let [nx, ny, nz] = shape;
    let stride = [1, nx, nx * ny];
    for axis in 0..3 {
        let na = shape[axis];
        if na < 2 {
            continue;
        }
        for k in 0..nz {
            for j in 0..ny {
                for i in 0..nx {
                    let upper = i + nx * (j + ny * k);
                    let coord = [i, j, k][axis];
                    let lower = if coord > 0 {
                        upper - stride[axis]
                    } else if op.periodic[axis] {
                        upper + (na - 1) * stride[axis]
                    } else {
                        continue;
                    };
                    if !op.active[lower] || !op.active[upper] {
                        let f = face_index(shape, axis, i, j, k);
                        op.conductance[axis][f] = 0.0;
                        op.flux[axis][f] = 0.0;
                    }
                }
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
}
