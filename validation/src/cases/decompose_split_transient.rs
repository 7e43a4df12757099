//! Self versus neighbours in time (`solver::solve_transient`, `split_cells`): every step solves one linear
//! system for every source with the same operator, BDF coefficients and history, so with no inlet ligand and
//! a zero initial field the own fields of all cells add up to the total field at every step to solver
//! tolerance (superposition of a linear discrete system), however the adaptive steps and the secretion starts
//! fall. Per cell the own part of the anisotropy vector plus the neighbour part (total − own) is the sensed
//! anisotropy, and an isolated cell's neighbour part vanishes.

#[cfg(test)]
mod tests {
    use super::super::setup::{darcy, far_field_box, OFF_GRID};
    use mesh::{Cell, EmbeddedGeometry, Grid, Layout};
    use solver::linalg::{KrylovParams, MultigridParams};
    use solver::post::decompose::{facets_by_owner, split_cell, CellSplit, SurfaceForms};
    use solver::post::CellSensing;
    use solver::problem::{LigandParameters, SurfaceUptake};
    use solver::solve_case::SteadyCase;
    use solver::solve_transient::{
        solve_transient_case, StepReport, TimeStepping, TransientCase, TransientObserver, TransientOutput,
        TransientParams, TransientSolution, TransientState,
    };
    use solver::transport::{assemble_transport, TransportProblem};

    const TOLERANCE: f64 = 1e-11;
    const RADIUS: f64 = 6e-6;
    const D: f64 = 1e-10;

    /// Keeps the splits and sensing of the last output time.
    #[derive(Default)]
    struct LastOutput {
        splits: Vec<CellSplit>,
        sensing: Vec<CellSensing>,
        outputs: usize,
    }

    impl TransientObserver for LastOutput {
        fn step(&mut self, _: &TransientState, _: &StepReport) -> Result<(), String> {
            Ok(())
        }
        fn output(&mut self, output: &TransientOutput<'_>) -> Result<(), String> {
            self.splits = output.splits.to_vec();
            self.sensing = output.sensing.to_vec();
            self.outputs += 1;
            Ok(())
        }
    }

    /// `cells` (centre offset along x in radii, secretion start in a²/D) in a far-field box with a slow flow
    /// along x, first-order uptake, decay, no inlet ligand; every cell split; adaptive steps to 6 a²/D.
    fn run(cells: &[(f64, f64)]) -> (Grid, Layout, TransientSolution, LastOutput) {
        let d = D;
        let unit = RADIUS * RADIUS / d;
        let h = RADIUS / 3.0;
        let grid = Grid::new([0.0; 3], h, [42, 24, 24]);
        let centre = [0, 1, 2].map(|a| 0.5 * grid.shape[a] as f64 * h + OFF_GRID[a] * h);
        let layout = Layout {
            cells: cells
                .iter()
                .enumerate()
                .map(|(id, &(dx, _))| Cell {
                    id,
                    centre: [centre[0] + dx * RADIUS, centre[1], centre[2]],
                    radius: RADIUS,
                    secretion_rate: 1.0 + id as f64,
                })
                .collect(),
        };
        let ligand = ligand();
        let krylov = KrylovParams { relative_tolerance: TOLERANCE, max_iterations: 500 };
        let case = TransientCase {
            steady: SteadyCase {
                grid: &grid,
                layout: &layout,
                boundaries: far_field_box(),
                flow: darcy(1e-14, 0.5 * d / RADIUS),
                ligand,
                integration_time: 3600.0,
                krylov: krylov.clone(),
            },
            flow_changes: Vec::new(),
            secretion_start: cells.iter().map(|&(_, start)| start * unit).collect(),
            params: TransientParams {
                start_time: 0.0,
                end_time: 6.0 * unit,
                stepping: TimeStepping::Adaptive {
                    initial_step: 0.01 * unit,
                    tolerance: 1e-4,
                    max_step: unit,
                },
                output_times: vec![3.0 * unit, 6.0 * unit],
                krylov,
                multigrid: MultigridParams::default(),
                window_start: 0.0,
                readable_error: 1.0,
                steady: None,
                stop_at_steady: None,
                switched_on_far_field: true,
                split_cells: (0..cells.len()).collect(),
            },
        };
        let mut last = LastOutput::default();
        let solution =
            solve_transient_case(&case, None, None, &mut last, &mut |_| {}).expect("transient run");
        (grid, layout, solution, last)
    }

    fn ligand() -> LigandParameters {
        LigandParameters {
            diffusivity: D,
            decay_rate: 0.5 * D / (RADIUS * RADIUS),
            inlet_concentration: 0.0,
            uptake: SurfaceUptake::FirstOrder { rate_constant: D / RADIUS },
        }
    }

    fn max_abs(v: impl Iterator<Item = f64>) -> f64 {
        v.fold(0.0f64, |m, x| m.max(x.abs()))
    }

    #[test]
    fn own_fields_add_up_to_the_total_in_time() {
        // Two cells 5 radii apart, the downstream one switched on at 1 a²/D.
        let (grid, layout, solution, last) = run(&[(-2.5, 0.0), (2.5, 1.0)]);
        let state = &solution.state;
        assert_eq!(last.outputs, 2);
        assert!(state.own_fields.iter().all(|o| o.failed.is_none()));
        let total = &state.concentration;
        let scale = max_abs(total.iter().copied());
        let sum_error = max_abs(
            (0..total.len())
                .map(|p| state.own_fields.iter().map(|o| o.concentration[p]).sum::<f64>() - total[p]),
        ) / scale;

        // Cell 0's own part evaluated on total − (cell 1's own field): the same as on its own field.
        let geometry = EmbeddedGeometry::build(&grid, &layout, [false; 3]);
        let stencils = solver::embedded::FacetStencils::build(&geometry);
        let assembly = assemble_transport(&TransportProblem {
            geometry: &geometry,
            stencils: &stencils,
            layout: &layout,
            boundaries: far_field_box(),
            ligand: ligand(),
            face_flux: &solution.flows[0].face_flux,
            far_field_speed: 0.0,
        });
        let forms =
            SurfaceForms { geometry: &geometry, exchanges: &assembly.facets, uptake: ligand().uptake };
        let facets = &facets_by_owner(&geometry, 2)[0];
        let others: Vec<f64> =
            total.iter().zip(&state.own_fields[1].concentration).map(|(t, o)| t - o).collect();
        let via_others = split_cell(forms, 0, facets, [1.0, 0.0, 0.0], &others, total);
        let own_part = last.splits[0].anisotropy_from_self;
        let superposition_error = max_abs((0..3).map(|a| via_others.anisotropy_from_self[a] - own_part[a]))
            / max_abs(own_part.iter().copied());
        let split = &last.splits[0];
        let sensed = last.sensing[0].anisotropy;
        let parts_error = max_abs(
            (0..3).map(|a| split.anisotropy_from_self[a] + split.anisotropy_from_neighbours[a] - sensed[a]),
        ) / max_abs(sensed.iter().copied());
        eprintln!(
            "transient split, two cells, {} steps ({} rejected): max |Σ own − total| / max |total| = {sum_error:.2e}, \
             cell 0's own part on total − other's own / on its own field − 1 = {superposition_error:.2e}, \
             per-component |self + neighbours − anisotropy| / |anisotropy| = {parts_error:.2e}",
            state.steps, state.rejected_steps
        );
        assert!(sum_error <= 100.0 * TOLERANCE, "{sum_error:.3e}");
        assert!(superposition_error <= 100.0 * TOLERANCE, "{superposition_error:.3e}");
        assert!(parts_error <= 1e-12, "{parts_error:.3e}");
    }

    #[test]
    fn an_isolated_cell_has_no_neighbour_part_in_time() {
        let (_, _, solution, last) = run(&[(0.0, 0.5)]);
        let split = &last.splits[0];
        let own = max_abs(split.anisotropy_from_self.iter().copied());
        let neighbours = max_abs(split.anisotropy_from_neighbours.iter().copied());
        let bound = split.neighbour_bound_rate.abs() / split.self_bound_rate;
        eprintln!(
            "transient split, isolated cell, {} steps: |neighbour part| / |own part| = {:.2e}, neighbour / own bound rate = {bound:.2e}, share {}",
            solution.state.steps,
            neighbours / own,
            split.self_signal_share
        );
        assert!(own > 0.0);
        // The own field is solved from its own guess, so the total and the own field agree to solver tolerance.
        assert!(neighbours <= 100.0 * TOLERANCE * own, "{neighbours:.3e} vs {own:.3e}");
        assert!(bound <= 100.0 * TOLERANCE, "{bound:.3e}");
        assert!((split.self_signal_share - 1.0).abs() <= 1e-6, "{}", split.self_signal_share);
    }
}
