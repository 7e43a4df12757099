//! Red–black Gauss–Seidel smoothing of `A x = b` on one multigrid level, in parallel over x-lines.
//!
//! One colour sweep updates every cell with `(i + j + k) mod 2 = colour`:
//!
//! ```text
//! x_P ← (b_P − Σ_6 neighbours a_PN x_N) / a_PP
//! ```
//!
//! On a 7-point stencil every neighbour of a cell has the other colour, so the cells of one colour are
//! independent and the result does not depend on the thread count. The exception is a periodic axis of odd size
//! (the wrap-around neighbour has the same colour): along x that stays inside one line (one task, fixed order);
//! along y or z it would cross tasks, and those levels are swept sequentially.

use super::real::Real;
use super::stencil::{min_lines, Stencil7};
use rayon::prelude::*;

/// The two colours in the order of a pre-smoothing sweep; post-smoothing runs them reversed (symmetric cycle).
pub(crate) const RED: usize = 0;
pub(crate) const BLACK: usize = 1;

/// Shared mutable access to the unknowns for one colour sweep.
#[derive(Clone, Copy)]
struct SharedUnknowns<T>(*mut T);
// SAFETY: used only inside `gauss_seidel_colour`, where concurrent tasks write disjoint cells of one colour and
// read only cells of the other colour (or of their own line), see the module documentation.
unsafe impl<T: Send> Send for SharedUnknowns<T> {}
unsafe impl<T: Sync> Sync for SharedUnknowns<T> {}

/// One Gauss–Seidel sweep over the cells of `colour`.
pub(crate) fn gauss_seidel_colour<T: Real>(a: &Stencil7<T>, x: &mut [T], b: &[T], colour: usize) {
    assert_eq!(x.len(), a.len());
    assert_eq!(b.len(), a.len());
    let [nx, ny, nz] = a.shape();
    let periodic = a.periodic();
    let same_colour_wrap = (periodic[1] && ny > 1 && ny % 2 == 1) || (periodic[2] && nz > 1 && nz % 2 == 1);
    let shared = SharedUnknowns(x.as_mut_ptr());
    let sweep_line = move |line: usize| {
        let shared = shared;
        let ln = a.line_neighbours(line);
        let j = line % ny;
        let k = line / ny;
        let first = (colour + j + k) % 2;
        // SAFETY: indices come from the stencil's own neighbour tables and are < a.len() = x.len(); no other
        // task writes the cells read here (module documentation).
        let get = |q: usize| unsafe { *shared.0.add(q) };
        let mut i = first;
        while i < nx {
            let p = ln.base + i;
            let value = (b[p] - a.off_diagonal(get, &ln, i)) / a.diagonal(p);
            unsafe { *shared.0.add(p) = value };
            i += 2;
        }
    };
    let lines = ny * nz;
    if same_colour_wrap || a.len() < 4096 {
        (0..lines).for_each(sweep_line);
    } else {
        (0..lines).into_par_iter().with_min_len(min_lines(nx)).for_each(sweep_line);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::linalg::operator::AdvectionScheme;
    use crate::linalg::test_problems::{random_operator, random_vector};

    /// Red–black sweeps on a diagonally dominant system converge to the solution, with bit-identical results
    /// on one thread and on several.
    #[test]
    fn sweeps_converge_and_do_not_depend_on_thread_count() {
        for (shape, periodic) in [([24, 20, 18], [false, true, true]), ([9, 7, 5], [true, true, true])] {
            let mut op = random_operator(shape, periodic, 2);
            op.sink.iter_mut().for_each(|s| *s += 2.0);
            let a = Stencil7::assemble(&op, AdvectionScheme::Upwind);
            let exact = random_vector(a.len(), 4);
            let mut b = vec![0.0; a.len()];
            a.apply(&exact, &mut b);
            let run = || {
                let mut x = vec![0.0; a.len()];
                for _ in 0..60 {
                    gauss_seidel_colour(&a, &mut x, &b, RED);
                    gauss_seidel_colour(&a, &mut x, &b, BLACK);
                }
                x
            };
            let x = run();
            let single = rayon::ThreadPoolBuilder::new().num_threads(1).build().map(|pool| pool.install(run));
            if let Ok(x1) = single {
                assert!(x1 == x, "{shape:?}: thread count changed the result");
            }
            let err = x.iter().zip(&exact).map(|(u, v)| (u - v).abs()).fold(0.0, f64::max);
            assert!(err < 1e-10, "{shape:?}: error {err}");
        }
    }
}
