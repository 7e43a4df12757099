//! Transport at high Péclet number: an absorbing sphere in Stokes flow (validation::cases::sherwood_sphere).

use validation::cases::sherwood_sphere::SphereInStream;
use validation::reference::thin_boundary_layer;

/// Pe = 1000 (cell Péclet number about 60 at a/h = 4): the solve converges and the discrete molecule balance
/// closes to solver tolerance.
#[test]
fn absorbing_sphere_at_peclet_1000_conserves_molecules() {
    let s = SphereInStream::solve(4.0, 4.0).expect("flow").sherwood(1000.0).expect("transport");
    eprintln!("{s:?}");
    assert!(s.max_cell_peclet > 50.0, "{s:?}");
    assert!(s.mass_balance <= 1e-8, "{s:?}");
    assert!(s.sherwood.is_finite() && s.sherwood > 0.0, "{s:?}");
}

/// Grid refinement at Pe = 100, 300, 1000 against the thin-boundary-layer result (minutes: `--ignored`;
/// `PLUMEFIELD_SHERWOOD_GRIDS` lists the radii in spacings, `PLUMEFIELD_SHERWOOD_BOX` the box half-width in radii).
#[test]
#[ignore]
fn sherwood_number_with_grid_refinement() {
    let grids: Vec<f64> = std::env::var("PLUMEFIELD_SHERWOOD_GRIDS")
        .ok()
        .map(|v| v.split(',').filter_map(|x| x.trim().parse().ok()).collect())
        .unwrap_or_else(|| vec![4.0, 6.0, 8.0]);
    // Half-width of the box in radii: the confinement study varies it.
    let half_width: f64 =
        std::env::var("PLUMEFIELD_SHERWOOD_BOX").ok().and_then(|v| v.trim().parse().ok()).unwrap_or(6.0);
    println!("a/h  Pe      Sh        box-corrected ref  rel.diff  max cell Pe  surface Pe  drag/6pi mu a U  balance   iterations");
    for &resolution in &grids {
        let stream = SphereInStream::solve(resolution, half_width).expect("flow");
        for pe in [100.0, 300.0, 1000.0] {
            let s = stream.sherwood(pe).expect("transport");
            let reference = thin_boundary_layer::sherwood_two_term(pe, s.drag_ratio).unwrap();
            println!(
                "{resolution:<4} {pe:<7} {:<9.4} {reference:<18.4} {:<+9.4} {:<12.1} {:<11.1} {:<16.4} {:<9.1e} {}",
                s.sherwood,
                s.sherwood / reference - 1.0,
                s.max_cell_peclet,
                s.surface_peclet,
                s.drag_ratio,
                s.mass_balance,
                s.krylov_iterations
            );
            assert!(s.mass_balance <= 1e-8, "{s:?}");
        }
    }
}

/// The multigrid-preconditioned solve of the fitted operator needs about as many iterations at cell Péclet
/// number 1000 as at 1 (the coarse levels upwind a stable operator): same sphere, a/h = 4, box ±4a.
#[test]
fn multigrid_iterations_stay_flat_up_to_cell_peclet_1000() {
    let stream = SphereInStream::solve(4.0, 4.0).expect("flow");
    let mut counts = Vec::new();
    for cell_peclet in [1.0, 10.0, 100.0, 1000.0] {
        // Pe = U d / D = cell Péclet · d / h = 8 · cell Péclet at a/h = 4.
        let s = stream.sherwood(8.0 * cell_peclet).expect("transport");
        eprintln!(
            "cell Péclet {cell_peclet}: {} iterations, balance {:.1e}",
            s.krylov_iterations, s.mass_balance
        );
        assert!(s.mass_balance <= 1e-8, "{s:?}");
        counts.push(s.krylov_iterations);
    }
    assert!(counts.iter().all(|&n| n <= 30), "{counts:?}");
}

/// A transient run at cell Péclet number ~1000 (Darcy channel, one reflecting secreting cell, BDF2 on the
/// fitted operator): every step converges, no negative concentration, and the molecule balance closes.
#[test]
fn transient_steps_converge_at_cell_peclet_1000() {
    use mesh::{Cell, Grid, Layout};
    use solver::problem::{ChamberBoundaries, ChamberFace, LigandParameters, SurfaceUptake};
    use solver::solve_transient::TimeStepping;
    use validation::cases::setup::darcy;
    use validation::cases::transient_setup::{run_transient, TransientRun};

    let h = 2e-6;
    let grid = Grid::new([0.0; 3], h, [40, 16, 16]);
    let layout = Layout {
        cells: vec![Cell { id: 0, centre: [20.3e-6, 16.2e-6, 15.9e-6], radius: 6e-6, secretion_rate: 1.0 }],
    };
    let mut faces = [[ChamberFace::Wall; 2]; 3];
    faces[0] = [ChamberFace::Inlet, ChamberFace::Outlet];
    let diffusivity = 1e-12;
    let speed = 5e-4; // U h / D = 1000
    let run = TransientRun {
        grid: &grid,
        layout: &layout,
        boundaries: ChamberBoundaries::new(faces),
        flow: darcy(1e-13, speed),
        ligand: LigandParameters {
            diffusivity,
            decay_rate: 0.0,
            inlet_concentration: 0.0,
            uptake: SurfaceUptake::None,
        },
        stepping: TimeStepping::Fixed { step: 0.02 },
        end_time: 0.4,
        output_times: vec![0.4],
        tolerance: 1e-10,
    };
    let (recorded, solution) = run_transient(&run, None, true).expect("every step converges");
    let field = recorded.fields.last().expect("output");
    let max = field.iter().fold(0.0f64, |m, &c| m.max(c));
    let min = field.iter().fold(f64::INFINITY, |m, &c| m.min(c));
    eprintln!(
        "{} steps, {} iterations, worst balance {:.1e}, min/max {min:.2e}/{max:.2e}",
        recorded.steps, recorded.iterations, recorded.worst_balance
    );
    let _ = solution;
    assert_eq!(recorded.steps, 20);
    assert!(max > 0.0 && min >= -1e-9 * max, "min {min:e}, max {max:e}");
    assert!(recorded.worst_balance <= 1e-8, "{}", recorded.worst_balance);
}
