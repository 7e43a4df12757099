//! Red–black Gauss–Seidel smoothing of `A x = b` on one multigrid level, in parallel over x-lines.
//!
//! One colour sweep updates every cell with `(i + j + k) mod 2 = colour`:
//!
//! ```text
//! x_P ← (b_P − Σ_6 neighbours a_PN x_N) / a_PP
//! ```
//!
//! On a 7-point stencil every neighbour of a cell has the other colour, so the cells of one colour are
//! independent and the result does not depend on the thread count (the kernels live with the per-colour
//! storage in [`super::coloured_stencil`]). Pre-smoothing starts from zero, so its first red sweep is
//! `x = b / a_PP`; post-smoothing runs the colours reversed (symmetric cycle).

use super::coloured_stencil::{ColouredStencil, Split};
use super::real::Real;

/// The two colours in the order of a pre-smoothing sweep; post-smoothing runs them reversed.
pub(crate) const RED: usize = 0;
pub(crate) const BLACK: usize = 1;

/// `sweeps` red–black sweeps from a zero initial guess (x is overwritten). With no sweep, x is set to zero.
pub(crate) fn pre_smooth<T: Real>(a: &ColouredStencil<T>, x: &mut Split<T>, b: &Split<T>, sweeps: usize) {
    if sweeps == 0 {
        x.iter_mut().for_each(|c| c.iter_mut().for_each(|v| *v = T::ZERO));
        return;
    }
    a.smooth_from_zero(RED, x, b);
    a.smooth(BLACK, x, b);
    for _ in 1..sweeps {
        a.smooth(RED, x, b);
        a.smooth(BLACK, x, b);
    }
}

/// `sweeps` black–red sweeps from the current x.
pub(crate) fn post_smooth<T: Real>(a: &ColouredStencil<T>, x: &mut Split<T>, b: &Split<T>, sweeps: usize) {
    for _ in 0..sweeps {
        a.smooth(BLACK, x, b);
        a.smooth(RED, x, b);
    }
}

/// Colours whose residual is not zero after pre-smoothing (the last sweep, black, zeroes its own residual,
/// unless an odd periodic axis couples black cells to black cells).
pub(crate) fn colours_with_residual<T: Real>(a: &ColouredStencil<T>, pre_sweeps: usize) -> &'static [usize] {
    if pre_sweeps > 0 && !a.has_same_colour_wrap() {
        &[RED]
    } else {
        &[RED, BLACK]
    }
}

/// Colours a coarse correction must reach (the first post-smoothing sweep, black, overwrites black cells
/// from red values only, unless an odd periodic axis couples black cells to black cells).
pub(crate) fn colours_to_correct<T: Real>(a: &ColouredStencil<T>, post_sweeps: usize) -> &'static [usize] {
    if post_sweeps > 0 && !a.has_same_colour_wrap() {
        &[RED]
    } else {
        &[RED, BLACK]
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::operator::AdvectionScheme;
    use crate::linalg::stencil::Stencil7;
    use crate::linalg::test_problems::{random_operator, random_vector};

    /// Red–black sweeps on a diagonally dominant system converge to the solution, with bit-identical results
    /// on one thread and on several; odd periodic sizes (sequential sweeps, same-colour wrap) included.
    #[test]
    fn sweeps_converge_and_do_not_depend_on_thread_count() {
        for (shape, periodic) in [
            ([24, 20, 18], [false, true, true]),
            ([9, 7, 5], [true, true, true]),
            ([33, 40, 20], [true, false, false]),
        ] {
            let mut op = random_operator(shape, periodic, 2);
            op.sink.iter_mut().for_each(|s| *s += 2.0);
            let natural = Stencil7::assemble(&op, AdvectionScheme::Upwind);
            let a = ColouredStencil::<f64>::assemble(&op, AdvectionScheme::Upwind, 1.0);
            let exact = random_vector(natural.len(), 4);
            let mut bn = vec![0.0; natural.len()];
            natural.apply(&exact, &mut bn);
            let mut b = a.zeros();
            a.load_natural(&bn, &mut b);
            let run = || {
                let mut x = a.zeros();
                pre_smooth(&a, &mut x, &b, 1);
                for _ in 0..60 {
                    post_smooth(&a, &mut x, &b, 1);
                }
                x
            };
            let x = run();
            let single = rayon::ThreadPoolBuilder::new().num_threads(1).build().map(|pool| pool.install(run));
            if let Ok(x1) = single {
                assert!(x1 == x, "{shape:?}: thread count changed the result");
            }
            let x = a.to_natural(&x);
            let err = x.iter().zip(&exact).map(|(u, v)| (u - v).abs()).fold(0.0, f64::max);
            assert!(err < 1e-10, "{shape:?}: error {err}");
        }
    }

    /// After a black sweep the residual of every black cell is zero (to rounding): restriction may skip them.
    #[test]
    fn black_residual_vanishes_after_a_black_sweep() {
        let op = random_operator([20, 8, 6], [false, true, false], 5);
        let a = ColouredStencil::<f64>::assemble(&op, AdvectionScheme::Central, 1.0);
        let mut b = a.zeros();
        a.load_natural(&random_vector(a.cells(), 6), &mut b);
        let mut x = a.zeros();
        pre_smooth(&a, &mut x, &b, 2);
        let mut r = a.zeros();
        a.residual(&x, &b, &mut r);
        let black = r[BLACK].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let red = r[RED].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert!(black < 1e-14 && red > 1e-3, "black {black}, red {red}");
    }
}
