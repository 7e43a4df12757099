//! Coarsening of the *physical* coefficients of a face-coupled operator, 2×2×2 grid cells → 1.
//!
//! Coarse cell I covers fine cells 2I and 2I+1 along every axis (only 2I when the fine size is odd and I is the
//! last coarse cell; an axis of size 1 stays 1), so the coarse size is ⌈n/2⌉. The coarse face with index I lies
//! on fine face min(2I, n). Rules (common practice for cell-centred finite volumes, e.g. the "sum/2" conductance
//! of cell-centred multigrid for diffusion; stated from memory, no single source):
//!
//! ```text
//! G_c = (Σ fine G across the coarse face) / 2     (twice the area over twice the distance)
//! F_c =  Σ fine F across the coarse face           (keeps a divergence-free flux divergence-free)
//! S_c =  Σ fine S of the children
//! active_c = any child active
//! ```
//!
//! The `/2` is the doubled distance between coarse centres; faces normal to an axis of size 1 (boundary faces
//! only, never coupling) are summed without it. A ragged last cell (one child) keeps the `/2`: a first-order
//! error in the preconditioner only.

use super::operator::FaceCoupledOperator;
use super::stencil::min_lines;
use rayon::prelude::*;

/// Coarse size of an axis of fine size `n`.
#[inline]
pub(crate) fn coarse_size(n: usize) -> usize {
    n.div_ceil(2)
}

/// Coarse operator from the fine one by the rules of the module documentation, one coarse x-line per parallel
/// task; every sum runs over the children (or fine faces) in natural order, so the result does not depend on the
/// thread count.
pub(crate) fn coarsen_operator(fine: &FaceCoupledOperator) -> FaceCoupledOperator {
    let fs = fine.shape;
    let cs = fs.map(coarse_size);
    // Fine index range [lo, hi) along axis a under coarse index c: the children of a cell, or (along the normal
    // of a face, `normal == a`) the single fine face min(2c, n).
    let children = |a: usize, c: usize, normal: Option<usize>| -> (usize, usize) {
        if normal == Some(a) {
            let lo = (2 * c).min(fs[a]);
            (lo, lo + 1)
        } else {
            (2 * c, (2 * c + 2).min(fs[a]))
        }
    };
    let ncells = cs[0] * cs[1] * cs[2];
    let mut sink = vec![0.0; ncells];
    let mut active = vec![false; ncells];
    sink.par_chunks_mut(cs[0])
        .zip(active.par_chunks_mut(cs[0]))
        .enumerate()
        .with_min_len(min_lines(cs[0]))
        .for_each(|(cline, (sl, al))| {
            let (jc, kc) = (cline % cs[1], cline / cs[1]);
            let ((j0, j1), (k0, k1)) = (children(1, jc, None), children(2, kc, None));
            for ic in 0..cs[0] {
                let (i0, i1) = children(0, ic, None);
                for k in k0..k1 {
                    for j in j0..j1 {
                        let row = fs[0] * (j + fs[1] * k);
                        for p in row + i0..row + i1 {
                            sl[ic] += fine.sink[p];
                            al[ic] |= fine.active[p];
                        }
                    }
                }
            }
        });
    let coarsen_faces = |axis: usize| -> (Vec<f64>, Vec<f64>) {
        let (mut cfs, mut ffs) = (cs, fs);
        cfs[axis] += 1;
        ffs[axis] += 1;
        let nfaces = cfs[0] * cfs[1] * cfs[2];
        let mut g = vec![0.0; nfaces];
        let mut f = vec![0.0; nfaces];
        // A coarse face normal to an axis that is not coarsened (size 1) has fine faces 0 and 1 only.
        let halve = if fs[axis] > 1 { 0.5 } else { 1.0 };
        let (fine_g, fine_f) = (&fine.conductance[axis], &fine.flux[axis]);
        g.par_chunks_mut(cfs[0])
            .zip(f.par_chunks_mut(cfs[0]))
            .enumerate()
            .with_min_len(min_lines(cfs[0]))
            .for_each(|(cline, (gl, fl))| {
                let (jc, kc) = (cline % cfs[1], cline / cfs[1]);
                let ((j0, j1), (k0, k1)) = (children(1, jc, Some(axis)), children(2, kc, Some(axis)));
                for ic in 0..cfs[0] {
                    let (i0, i1) = children(0, ic, Some(axis));
                    let (mut gs, mut fsum) = (0.0, 0.0);
                    for kk in k0..k1 {
                        for jj in j0..j1 {
                            let row = ffs[0] * (jj + ffs[1] * kk);
                            for ff in row + i0..row + i1 {
                                gs += fine_g[ff];
                                fsum += fine_f[ff];
                            }
                        }
                    }
                    gl[ic] = halve * gs;
                    fl[ic] = fsum;
                }
            });
        (g, f)
    };
    let (gx, fx) = coarsen_faces(0);
    let (gy, fy) = coarsen_faces(1);
    let (gz, fz) = coarsen_faces(2);
    FaceCoupledOperator {
        shape: cs,
        periodic: fine.periodic,
        conductance: [gx, gy, gz],
        flux: [fx, fy, fz],
        sink,
        active,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::stencil::face_index;
    use crate::linalg::test_problems::random_operator;

    /// The coarsening rules cell by cell and face by face in natural order (the reference for the line-parallel
    /// form, which must give the same bits).
    fn coarsen_by_definition(fine: &FaceCoupledOperator) -> FaceCoupledOperator {
        let fs = fine.shape;
        let cs = fs.map(coarse_size);
        let ncells = cs[0] * cs[1] * cs[2];
        let mut sink = vec![0.0; ncells];
        let mut active = vec![false; ncells];
        for k in 0..fs[2] {
            for j in 0..fs[1] {
                for i in 0..fs[0] {
                    let p = i + fs[0] * (j + fs[1] * k);
                    let c = i / 2 + cs[0] * (j / 2 + cs[1] * (k / 2));
                    sink[c] += fine.sink[p];
                    active[c] |= fine.active[p];
                }
            }
        }
        let coarsen_faces = |axis: usize| -> (Vec<f64>, Vec<f64>) {
            let mut cfs = cs;
            cfs[axis] += 1;
            let nfaces = cfs[0] * cfs[1] * cfs[2];
            let mut g = vec![0.0; nfaces];
            let mut f = vec![0.0; nfaces];
            // A coarse face normal to an axis that is not coarsened (size 1) has fine faces 0 and 1 only.
            let halve = if fs[axis] > 1 { 0.5 } else { 1.0 };
            for kc in 0..cfs[2] {
                for jc in 0..cfs[1] {
                    for ic in 0..cfs[0] {
                        let cf = ic + cfs[0] * (jc + cfs[1] * kc);
                        let coarse = [ic, jc, kc];
                        // Fine faces making up this coarse face: along `axis` the single fine face min(2I, n); along
                        // the two other axes the (one or two) children.
                        let mut lo = [0usize; 3];
                        let mut hi = [0usize; 3];
                        for a in 0..3 {
                            if a == axis {
                                lo[a] = (2 * coarse[a]).min(fs[a]);
                                hi[a] = lo[a] + 1;
                            } else {
                                lo[a] = 2 * coarse[a];
                                hi[a] = (2 * coarse[a] + 2).min(fs[a]);
                            }
                        }
                        let (mut gs, mut fsum) = (0.0, 0.0);
                        for kk in lo[2]..hi[2] {
                            for jj in lo[1]..hi[1] {
                                for ii in lo[0]..hi[0] {
                                    let ff = face_index(fs, axis, ii, jj, kk);
                                    gs += fine.conductance[axis][ff];
                                    fsum += fine.flux[axis][ff];
                                }
                            }
                        }
                        g[cf] = halve * gs;
                        f[cf] = fsum;
                    }
                }
            }
            (g, f)
        };
        let (gx, fx) = coarsen_faces(0);
        let (gy, fy) = coarsen_faces(1);
        let (gz, fz) = coarsen_faces(2);
        FaceCoupledOperator {
            shape: cs,
            periodic: fine.periodic,
            conductance: [gx, gy, gz],
            flux: [fx, fy, fz],
            sink,
            active,
        }
    }

    #[test]
    fn line_parallel_coarsening_gives_the_bits_of_the_definition() {
        for (shape, periodic) in
            [([9, 6, 5], [false, true, false]), ([8, 7, 1], [true, false, true]), ([1, 3, 4], [false; 3])]
        {
            let mut op = random_operator(shape, periodic, 17);
            op.active[2] = false;
            let (got, want) = (coarsen_operator(&op), coarsen_by_definition(&op));
            let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
            assert_eq!(got.shape, want.shape);
            assert_eq!(bits(&got.sink), bits(&want.sink), "{shape:?}");
            assert_eq!(got.active, want.active, "{shape:?}");
            for a in 0..3 {
                assert_eq!(bits(&got.conductance[a]), bits(&want.conductance[a]), "{shape:?} axis {a}");
                assert_eq!(bits(&got.flux[a]), bits(&want.flux[a]), "{shape:?} axis {a}");
            }
        }
    }

    /// A uniform conductance D·h on an n³ grid must coarsen to D·(2h) (area 4h², distance 2h).
    #[test]
    fn uniform_diffusion_coarsens_to_the_coarse_grid_discretisation() {
        let mut op = random_operator([8, 6, 1], [false, true, false], 1);
        for a in 0..3 {
            op.conductance[a].iter_mut().for_each(|g| *g = 3.0);
        }
        let c = coarsen_operator(&op);
        assert_eq!(c.shape, [4, 3, 1]);
        // x-faces: 2 fine faces (y) × 1 (z) summed, halved: 3.0 (area 2h·h, distance 2h → D h unchanged).
        assert!(c.conductance[0].iter().all(|&g| (g - 3.0).abs() < 1e-14));
        // z-faces: normal axis of size 1 is not coarsened; 4 fine faces of area h² → area 4h² over distance h.
        assert!(c.conductance[2].iter().all(|&g| (g - 12.0).abs() < 1e-14));
    }

    /// The coarse flux is the sum of the fine fluxes, so the net outflow of a coarse cell equals the summed net
    /// outflow of its children (discrete divergence is preserved).
    #[test]
    fn coarse_divergence_is_sum_of_fine_divergence_with_ragged_edges() {
        let op = random_operator([7, 5, 3], [false; 3], 9);
        let c = coarsen_operator(&op);
        assert_eq!(c.shape, [4, 3, 2]);
        let divergence = |o: &FaceCoupledOperator, i: usize, j: usize, k: usize| -> f64 {
            let s = o.shape;
            let mut d = 0.0;
            for (a, (di, dj, dk)) in [(1, 0, 0), (0, 1, 0), (0, 0, 1)].into_iter().enumerate() {
                d += o.flux[a][face_index(s, a, i + di, j + dj, k + dk)]
                    - o.flux[a][face_index(s, a, i, j, k)];
            }
            d
        };
        for kc in 0..2 {
            for jc in 0..3 {
                for ic in 0..4 {
                    let mut fine_sum = 0.0;
                    for k in 2 * kc..(2 * kc + 2).min(3) {
                        for j in 2 * jc..(2 * jc + 2).min(5) {
                            for i in 2 * ic..(2 * ic + 2).min(7) {
                                fine_sum += divergence(&op, i, j, k);
                            }
                        }
                    }
                    assert!((divergence(&c, ic, jc, kc) - fine_sum).abs() < 1e-12);
                }
            }
        }
    }
}
