//! Grid transfers between a multigrid level and the next coarser one (2×2×2 → 1, ragged edges allowed).
//!
//! Restriction sums the residuals of the active children: finite-volume residuals are cell integrals, and the
//! coarse operator is a sum of fine fluxes, so the sum is the consistent coarse right-hand side (common practice
//! for cell-centred multigrid). Prolongation is piecewise constant or trilinear in the cell centres (weights 3/4
//! on the parent and 1/4 on the neighbour towards the child, per axis), restricted to active coarse cells and
//! renormalised, constant across a non-periodic boundary.

use super::coarsen::coarse_size;
use super::real::Real;
use super::stencil::{min_lines, Stencil7};
use rayon::prelude::*;

/// How a coarse correction is carried to the fine grid.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Prolongation {
    /// The child takes its parent's value.
    Constant,
    /// Trilinear interpolation between coarse cell centres.
    Trilinear,
}

/// `coarse_b[I] = Σ_{active children p of I} (b − A x)_p`.
pub(crate) fn restrict_residual<T: Real>(
    a: &Stencil7<T>,
    active: &[bool],
    x: &[T],
    b: &[T],
    coarse_b: &mut [T],
) {
    let fs = a.shape();
    let cs = fs.map(coarse_size);
    assert_eq!(coarse_b.len(), cs[0] * cs[1] * cs[2]);
    coarse_b.par_chunks_mut(cs[0]).with_min_len(min_lines(cs[0])).enumerate().for_each(|(cline, out)| {
        out.iter_mut().for_each(|v| *v = T::ZERO);
        let jc = cline % cs[1];
        let kc = cline / cs[1];
        let mut ax = vec![T::ZERO; fs[0]];
        for k in 2 * kc..(2 * kc + 2).min(fs[2]) {
            for j in 2 * jc..(2 * jc + 2).min(fs[1]) {
                let line = j + fs[1] * k;
                let base = line * fs[0];
                a.line_product(x, line, &mut ax);
                let (bl, al) = (&b[base..base + fs[0]], &active[base..base + fs[0]]);
                for i in 0..fs[0] {
                    if al[i] {
                        out[i / 2] += bl[i] - ax[i];
                    }
                }
            }
        }
    });
}

/// Interpolation along one axis for a fine coordinate: parent, optional neighbour, and the parent's weight.
#[derive(Clone, Copy)]
struct AxisWeights {
    parent: usize,
    neighbour: usize,
    parent_weight: f64,
}

#[inline]
fn axis_weights(fine: usize, n_fine: usize, n_coarse: usize, periodic: bool) -> AxisWeights {
    let parent = fine / 2;
    let single = AxisWeights { parent, neighbour: parent, parent_weight: 1.0 };
    if 2 * parent + 1 >= n_fine {
        return single; // the parent has one child only (size-1 axis or ragged last cell)
    }
    let neighbour = if fine.is_multiple_of(2) {
        if parent > 0 {
            parent - 1
        } else if periodic && n_coarse > 1 {
            n_coarse - 1
        } else {
            return single;
        }
    } else if parent + 1 < n_coarse {
        parent + 1
    } else if periodic && n_coarse > 1 {
        0
    } else {
        return single;
    };
    AxisWeights { parent, neighbour, parent_weight: 0.75 }
}

/// `x_fine += P x_coarse` on active fine cells.
#[allow(clippy::too_many_arguments)]
pub(crate) fn prolongate_add<T: Real>(
    fine_shape: [usize; 3],
    periodic: [bool; 3],
    fine_active: &[bool],
    coarse_active: &[bool],
    coarse_x: &[T],
    fine_x: &mut [T],
    kind: Prolongation,
) {
    let fs = fine_shape;
    let cs = fs.map(coarse_size);
    let cidx = |i: usize, j: usize, k: usize| i + cs[0] * (j + cs[1] * k);
    fine_x.par_chunks_mut(fs[0]).with_min_len(min_lines(fs[0])).enumerate().for_each(|(line, out)| {
        let j = line % fs[1];
        let k = line / fs[1];
        let base = line * fs[0];
        match kind {
            Prolongation::Constant => {
                for (i, v) in out.iter_mut().enumerate() {
                    if fine_active[base + i] {
                        *v += coarse_x[cidx(i / 2, j / 2, k / 2)];
                    }
                }
            }
            Prolongation::Trilinear => {
                let wy = axis_weights(j, fs[1], cs[1], periodic[1]);
                let wz = axis_weights(k, fs[2], cs[2], periodic[2]);
                for (i, v) in out.iter_mut().enumerate() {
                    if !fine_active[base + i] {
                        continue;
                    }
                    let wx = axis_weights(i, fs[0], cs[0], periodic[0]);
                    let mut sum = 0.0;
                    let mut weight = 0.0;
                    for (cz, fz) in [(wz.parent, wz.parent_weight), (wz.neighbour, 1.0 - wz.parent_weight)] {
                        if fz == 0.0 {
                            continue;
                        }
                        for (cy, fy) in
                            [(wy.parent, wy.parent_weight), (wy.neighbour, 1.0 - wy.parent_weight)]
                        {
                            if fy == 0.0 {
                                continue;
                            }
                            for (cx, fx) in
                                [(wx.parent, wx.parent_weight), (wx.neighbour, 1.0 - wx.parent_weight)]
                            {
                                let c = cidx(cx, cy, cz);
                                if fx == 0.0 || !coarse_active[c] {
                                    continue;
                                }
                                let w = fx * fy * fz;
                                sum += w * coarse_x[c].to_f64();
                                weight += w;
                            }
                        }
                    }
                    if weight > 0.0 {
                        *v += T::from_f64(sum / weight);
                    }
                }
            }
        }
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Trilinear prolongation reproduces a coarse field that is linear in the cell centres, away from the
    /// boundary cells (where it extrapolates constantly).
    #[test]
    fn trilinear_is_exact_for_linear_fields_in_the_interior() {
        let fs = [12, 10, 8];
        let cs = fs.map(coarse_size);
        let nc = cs[0] * cs[1] * cs[2];
        let coarse_centre = |i: usize| 2.0 * i as f64 + 1.0; // in fine cell units
        let fine_centre = |i: usize| i as f64 + 0.5;
        let linear = |x: f64, y: f64, z: f64| 1.0 + 0.3 * x - 0.7 * y + 0.2 * z;
        let mut xc = vec![0.0f64; nc];
        for k in 0..cs[2] {
            for j in 0..cs[1] {
                for i in 0..cs[0] {
                    xc[i + cs[0] * (j + cs[1] * k)] =
                        linear(coarse_centre(i), coarse_centre(j), coarse_centre(k));
                }
            }
        }
        let n = fs[0] * fs[1] * fs[2];
        let mut xf = vec![0.0f64; n];
        prolongate_add(
            fs,
            [false; 3],
            &vec![true; n],
            &vec![true; nc],
            &xc,
            &mut xf,
            Prolongation::Trilinear,
        );
        for k in 1..fs[2] - 1 {
            for j in 1..fs[1] - 1 {
                for i in 1..fs[0] - 1 {
                    let v = xf[i + fs[0] * (j + fs[1] * k)];
                    let exact = linear(fine_centre(i), fine_centre(j), fine_centre(k));
                    assert!((v - exact).abs() < 1e-12, "({i},{j},{k}): {v} vs {exact}");
                }
            }
        }
    }

    /// Restriction of a zero-stencil residual is the sum of the children of every coarse cell (ragged sizes).
    #[test]
    fn restriction_sums_active_children() {
        use crate::linalg::operator::{AdvectionScheme, FaceCoupledOperator};
        let shape = [5, 3, 1];
        let n = 15;
        let mut active = vec![true; n];
        active[0] = false;
        let op = FaceCoupledOperator {
            shape,
            periodic: [false; 3],
            conductance: [vec![0.0; 18], vec![0.0; 20], vec![0.0; 30]],
            flux: [vec![0.0; 18], vec![0.0; 20], vec![0.0; 30]],
            sink: vec![0.0; n],
            active: active.clone(),
        };
        let a = Stencil7::<f64>::assemble(&op, AdvectionScheme::Central);
        let b: Vec<f64> = (0..n).map(|p| p as f64 + 1.0).collect();
        let x = vec![0.0; n];
        let mut cb = vec![0.0; 3 * 2];
        restrict_residual(&a, &active, &x, &b, &mut cb);
        // coarse (0,0): fine (0,0) inactive, (1,0), (0,1), (1,1) → b = 2 + 6 + 7.
        assert_eq!(cb[0], 15.0);
        // coarse (2,0): fine (4,0), (4,1) → 5 + 10; coarse (2,1): fine (4,2) → 15.
        assert_eq!(cb[2], 15.0);
        assert_eq!(cb[5], 15.0);
    }
}
