//! Results do not depend on the number of worker threads: a small chamber with a few cells, solved by Darcy,
//! Brinkman and Stokes flow in rayon pools of 1, 2 and 4 threads, gives the same bits in every field and every
//! per-cell result. The grid spans several reduction chunks, so a reduction whose order followed the thread
//! count would show.

use mesh::{Cell, Grid, Layout};
use solver::linalg::KrylovParams;
use solver::problem::{
    ChamberBoundaries, ChamberFace, FlowParameters, LigandParameters, MediumModel, SurfaceUptake,
};
use solver::solve_case::{solve_steady_case, SteadyCase, SteadySolution};

const VISCOSITY: f64 = 1e-3;
const PERMEABILITY: f64 = 1e-13;

fn chamber() -> (Grid, Layout) {
    let h = 2e-6;
    let grid = Grid::new([0.0; 3], h, [48, 24, 24]);
    let cells = [[20.3e-6, 22.1e-6, 23.7e-6], [51.9e-6, 25.2e-6, 21.4e-6], [71.1e-6, 19.8e-6, 27.3e-6]]
        .iter()
        .enumerate()
        .map(|(id, &centre)| Cell { id, centre, radius: 7e-6, secretion_rate: 0.5 + id as f64 })
        .collect();
    (grid, Layout { cells })
}

fn solve(grid: &Grid, layout: &Layout, medium: MediumModel, threads: usize) -> SteadySolution {
    let faces = [
        [ChamberFace::Inlet, ChamberFace::Outlet],
        [ChamberFace::Wall, ChamberFace::Wall],
        [ChamberFace::Symmetry, ChamberFace::Symmetry],
    ];
    let case = SteadyCase {
        grid,
        layout,
        boundaries: ChamberBoundaries::new(faces),
        flow: FlowParameters { medium, mean_velocity: 1e-6 },
        ligand: LigandParameters {
            diffusivity: 1e-10,
            decay_rate: 1e-4,
            inlet_concentration: 0.0,
            uptake: SurfaceUptake::FirstOrder { rate_constant: 1e-6 },
        },
        integration_time: 3600.0,
        krylov: KrylovParams { relative_tolerance: 1e-10, max_iterations: 500 },
    };
    let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("thread pool");
    pool.install(|| solve_steady_case(&case, &mut |_| {})).expect("solves")
}

/// Every number of the solution that reaches an output, as bits.
fn fingerprint(s: &SteadySolution) -> Vec<u64> {
    let mut bits = Vec::new();
    let mut push = |values: &[f64]| bits.extend(values.iter().map(|v| v.to_bits()));
    s.flow.face_flux.iter().for_each(|f| push(f));
    push(&s.flow.pressure);
    s.flow.velocity(&s.geometry.grid).iter().for_each(|v| push(v));
    s.flow.drag.iter().for_each(|d| push(d));
    push(&[s.flow.relative_residual, s.flow.max_divergence, s.flow.pressure_drop]);
    push(&s.cell_pressure_drop);
    push(&s.transport.concentration);
    for c in &s.sensing {
        push(&[
            c.mean_surface_concentration,
            c.bound_rate,
            c.anisotropy_along_flow,
            c.front_back_contrast,
            c.direction_error,
            c.local_speed,
        ]);
        push(&c.anisotropy);
        push(&c.local_flow_direction);
    }
    bits.push(s.flow.iterations as u64);
    bits
}

fn assert_same_bits_at_any_thread_count(medium: MediumModel) {
    let (grid, layout) = chamber();
    let reference = fingerprint(&solve(&grid, &layout, medium, 1));
    for threads in [2, 4] {
        let other = fingerprint(&solve(&grid, &layout, medium, threads));
        assert_eq!(reference.len(), other.len());
        let first = reference.iter().zip(&other).position(|(a, b)| a != b);
        assert!(
            first.is_none(),
            "{medium:?}: 1 and {threads} threads differ first at value {} ({} vs {})",
            first.unwrap_or(0),
            f64::from_bits(reference[first.unwrap_or(0)]),
            f64::from_bits(other[first.unwrap_or(0)])
        );
    }
}

#[test]
fn darcy_is_bit_identical_at_one_two_and_four_threads() {
    assert_same_bits_at_any_thread_count(MediumModel::Darcy {
        viscosity: VISCOSITY,
        permeability: PERMEABILITY,
    });
}

#[test]
fn brinkman_is_bit_identical_at_one_two_and_four_threads() {
    assert_same_bits_at_any_thread_count(MediumModel::Brinkman {
        viscosity: VISCOSITY,
        permeability: PERMEABILITY,
        effective_viscosity: VISCOSITY,
    });
}

#[test]
fn stokes_is_bit_identical_at_one_two_and_four_threads() {
    assert_same_bits_at_any_thread_count(MediumModel::Stokes { viscosity: VISCOSITY });
}
