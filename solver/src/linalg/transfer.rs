//! Grid transfers between a multigrid level and the next coarser one (2×2×2 → 1, ragged edges allowed).
//!
//! Restriction sums the residuals of the active children: finite-volume residuals are cell integrals, and the
//! coarse operator is a sum of fine fluxes, so the sum is the consistent coarse right-hand side (common practice
//! for cell-centred multigrid). Prolongation is piecewise constant or trilinear in the cell centres (weights 3/4
//! on the parent and 1/4 on the neighbour towards the child, per axis), restricted to active coarse cells and
//! renormalised, constant across a non-periodic boundary.

use super::coarsen::coarse_size;
use super::coloured_stencil::{slots, ColouredStencil, Split};
use super::real::Real;
use super::stencil::min_lines;
use rayon::prelude::*;

/// How a coarse correction is carried to the fine grid.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Prolongation {
    /// The child takes its parent's value.
    Constant,
    /// Trilinear interpolation between coarse cell centres.
    Trilinear,
}

/// `coarse_b[I] = Σ_{children p of I} (b − A x)_p`, summing the residuals of the fine cells of `colours` only
/// (after a sweep of one colour the residual of the other vanishes, up to rounding). Inactive cells carry a
/// zero residual (zero right-hand side, identity row), so they need no mask.
pub(crate) fn restrict_residual<T: Real>(
    fine: &ColouredStencil<T>,
    x: &Split<T>,
    b: &Split<T>,
    colours: &[usize],
    coarse: &ColouredStencil<T>,
    coarse_b: &mut Split<T>,
) {
    let fs = fine.shape();
    let cs = coarse.shape();
    assert_eq!(cs, fs.map(coarse_size), "restriction: the coarse level does not match the fine one");
    let (fh, ch) = (fine.half(), coarse.half());
    let [cb0, cb1] = coarse_b;
    cb0.par_chunks_mut(ch)
        .zip(cb1.par_chunks_mut(ch))
        .enumerate()
        .with_min_len(min_lines(cs[0]))
        .for_each_init(
            || (vec![T::ZERO; fh], vec![T::ZERO; cs[0]], <[Vec<T>; 4]>::default()),
            |(r, sum, scratch), (cline, (out0, out1))| {
                sum.iter_mut().for_each(|v| *v = T::ZERO);
                let (jc, kc) = (cline % cs[1], cline / cs[1]);
                for k in 2 * kc..(2 * kc + 2).min(fs[2]) {
                    for j in 2 * jc..(2 * jc + 2).min(fs[1]) {
                        let line = j + fs[1] * k;
                        for &colour in colours {
                            // Slot m holds fine x index first + 2m, whose coarse x index is m.
                            let count = fine.line_residual(colour, line, x, b, scratch, r);
                            for m in 0..count {
                                sum[m] += r[m];
                            }
                        }
                    }
                }
                out0.iter_mut().chain(out1.iter_mut()).for_each(|v| *v = T::ZERO);
                let outs = [out0, out1];
                for (ic, &v) in sum.iter().enumerate() {
                    outs[(ic + jc + kc) % 2][ic / 2] = v;
                }
            },
        );
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

/// `x_fine += P x_coarse` on the fine cells of `colours` (a Gauss–Seidel sweep of the other colour would
/// overwrite them anyway). Trilinear weights use active coarse cells only, renormalised.
pub(crate) fn prolongate_add<T: Real>(
    fine: &ColouredStencil<T>,
    coarse: &ColouredStencil<T>,
    coarse_active: &[bool],
    coarse_x: &Split<T>,
    fine_x: &mut Split<T>,
    colours: &[usize],
    kind: Prolongation,
) {
    let fs = fine.shape();
    let cs = coarse.shape();
    let periodic = fine.periodic();
    let (fh, ch) = (fine.half(), coarse.half());
    let coarse_value =
        |ic: usize, jc: usize, kc: usize| coarse_x[(ic + jc + kc) % 2][(jc + cs[1] * kc) * ch + ic / 2];
    for &colour in colours {
        fine_x[colour].par_chunks_mut(fh).enumerate().with_min_len(min_lines(fs[0])).for_each_init(
            || vec![T::ZERO; cs[0]],
            |parent_line, (line, out)| {
                let (j, k) = (line % fs[1], line / fs[1]);
                let first = fine.first(colour, line);
                let count = slots(fs[0], first);
                match kind {
                    Prolongation::Constant => {
                        let (jc, kc) = (j / 2, k / 2);
                        for (ic, v) in parent_line.iter_mut().enumerate() {
                            *v = coarse_value(ic, jc, kc);
                        }
                        for m in 0..count {
                            out[m] += parent_line[m];
                        }
                    }
                    Prolongation::Trilinear => {
                        let wy = axis_weights(j, fs[1], cs[1], periodic[1]);
                        let wz = axis_weights(k, fs[2], cs[2], periodic[2]);
                        for (m, out) in out.iter_mut().enumerate().take(count) {
                            let i = first + 2 * m;
                            let wx = axis_weights(i, fs[0], cs[0], periodic[0]);
                            let mut sum = 0.0;
                            let mut weight = 0.0;
                            for (cz, fz) in
                                [(wz.parent, wz.parent_weight), (wz.neighbour, 1.0 - wz.parent_weight)]
                            {
                                for (cy, fy) in
                                    [(wy.parent, wy.parent_weight), (wy.neighbour, 1.0 - wy.parent_weight)]
                                {
                                    for (cx, fx) in [
                                        (wx.parent, wx.parent_weight),
                                        (wx.neighbour, 1.0 - wx.parent_weight),
                                    ] {
                                        let w = fx * fy * fz;
                                        if w == 0.0 || !coarse_active[cx + cs[0] * (cy + cs[1] * cz)] {
                                            continue;
                                        }
                                        sum += w * coarse_value(cx, cy, cz).to_f64();
                                        weight += w;
                                    }
                                }
                            }
                            if weight > 0.0 {
                                *out += T::from_f64(sum / weight);
                            }
                        }
                    }
                }
            },
        );
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::operator::AdvectionScheme;
    use crate::linalg::smooth::{BLACK, RED};
    use crate::linalg::test_problems::random_operator;

    fn level(shape: [usize; 3]) -> ColouredStencil<f64> {
        ColouredStencil::assemble(&random_operator(shape, [false; 3], 1), AdvectionScheme::Central, 1.0)
    }

    /// Trilinear prolongation reproduces a coarse field that is linear in the cell centres, away from the
    /// boundary cells (where it extrapolates constantly).
    #[test]
    fn trilinear_is_exact_for_linear_fields_in_the_interior() {
        let fs = [12, 10, 8];
        let cs = fs.map(coarse_size);
        let (fine, coarse) = (level(fs), level(cs));
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
        let mut xcs = coarse.zeros();
        coarse.load_natural(&xc, &mut xcs);
        let mut xf = fine.zeros();
        prolongate_add(
            &fine,
            &coarse,
            &vec![true; nc],
            &xcs,
            &mut xf,
            &[RED, BLACK],
            Prolongation::Trilinear,
        );
        let xf = fine.to_natural(&xf);
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

    /// Constant prolongation to one colour gives each of its cells the parent's value and leaves the other
    /// colour alone (odd sizes included).
    #[test]
    fn constant_prolongation_copies_the_parent_into_one_colour() {
        let fs = [7, 5, 3];
        let cs = fs.map(coarse_size);
        let (fine, coarse) = (level(fs), level(cs));
        let nc = cs[0] * cs[1] * cs[2];
        let xc: Vec<f64> = (0..nc).map(|p| p as f64 + 1.0).collect();
        let mut xcs = coarse.zeros();
        coarse.load_natural(&xc, &mut xcs);
        let mut xf = fine.zeros();
        prolongate_add(&fine, &coarse, &vec![true; nc], &xcs, &mut xf, &[RED], Prolongation::Constant);
        let xf = fine.to_natural(&xf);
        for k in 0..fs[2] {
            for j in 0..fs[1] {
                for i in 0..fs[0] {
                    let expected = if (i + j + k) % 2 == 0 {
                        xc[i / 2 + cs[0] * (j / 2 + cs[1] * (k / 2))]
                    } else {
                        0.0
                    };
                    assert_eq!(xf[i + fs[0] * (j + fs[1] * k)], expected, "({i},{j},{k})");
                }
            }
        }
    }

    /// Restriction of a zero-stencil residual is the sum of the children of every coarse cell (ragged sizes),
    /// over both colours or over red cells only.
    #[test]
    fn restriction_sums_children() {
        use crate::linalg::operator::FaceCoupledOperator;
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
            active,
        };
        let fine = ColouredStencil::<f64>::assemble(&op, AdvectionScheme::Central, 1.0);
        let coarse = level([3, 2, 1]);
        // The multigrid keeps a zero right-hand side on inactive cells.
        let bn: Vec<f64> = (0..n).map(|p| if p == 0 { 0.0 } else { p as f64 + 1.0 }).collect();
        let mut b = fine.zeros();
        fine.load_natural(&bn, &mut b);
        let x = fine.zeros();
        let mut cb = coarse.zeros();
        restrict_residual(&fine, &x, &b, &[RED, BLACK], &coarse, &mut cb);
        let cb = coarse.to_natural(&cb);
        // coarse (0,0): fine (0,0) inactive, (1,0), (0,1), (1,1) → b = 2 + 6 + 7.
        assert_eq!(cb[0], 15.0);
        // coarse (2,0): fine (4,0), (4,1) → 5 + 10; coarse (2,1): fine (4,2) → 15.
        assert_eq!(cb[2], 15.0);
        assert_eq!(cb[5], 15.0);
        let mut cb = coarse.zeros();
        restrict_residual(&fine, &x, &b, &[RED], &coarse, &mut cb);
        let cb = coarse.to_natural(&cb);
        // red children of coarse (0,0): (0,0) (inactive, 0) and (1,1) → 7; of coarse (2,1): (4,2) → 15.
        assert_eq!(cb[0], 7.0);
        assert_eq!(cb[5], 15.0);
    }
}
