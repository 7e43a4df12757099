//! Self versus neighbours (`solver::post::decompose`): the transport is linear in its sources, so the fields of
//! every cell's secretion alone plus the field the inlet carries in must add up to the total field to solver
//! tolerance (superposition, exact for the discrete system; with upwinded faces the limiter is frozen at the
//! total, which the total itself satisfies), and an isolated cell's signal is all its own (share 1, neighbour part of its anisotropy vector zero). The
//! anisotropy vector's own and neighbour parts, the latter evaluated on the sum of the other parts, add up to
//! the total vector to the same tolerance.
//!
//! Tolerances: central advection, 100× the Krylov tolerance. With upwinded faces the total itself is only a
//! fixed point of the deferred-correction outer iterations to within their stopping rule (relative change
//! 1e-10 per iteration, times ρ/(1 − ρ) for a contraction ρ near 1 at high cell Péclet numbers), so that case
//! is held to 1e-7 and the number is reported.

use super::setup::{darcy, far_field_box, isolated_sphere, solve};
use super::{Check, Tier, VerifyError};
use mesh::layout::{random_sequential_addition, ChamberBox, RandomLayout, RandomTarget};
use mesh::Grid;
use solver::linalg::KrylovParams;
use solver::post::decompose::{decompose, DecomposeInputs, SplitMode};
use solver::post::SensingModel;
use solver::problem::{ChamberBoundaries, ChamberFace, LigandParameters, SurfaceUptake};
use solver::solve_case::SteadySolution;

const TOLERANCE: f64 = 1e-10;
const SOURCE: &str = "superposition of a linear discrete system";

fn inputs<'a>(
    solution: &'a SteadySolution,
    layout: &'a mesh::Layout,
    ligand: LigandParameters,
) -> DecomposeInputs<'a> {
    DecomposeInputs {
        geometry: &solution.geometry,
        layout,
        assembly: &solution.transport.assembly,
        solver: solution.transport.solver.as_ref().expect("the solved case keeps its solver"),
        total: &solution.transport.concentration,
        sensing: &solution.sensing,
        model: SensingModel {
            uptake: ligand.uptake,
            diffusivity: ligand.diffusivity,
            integration_time: 3600.0,
        },
        krylov: KrylovParams { relative_tolerance: TOLERANCE, max_iterations: 500 },
        parallel_solves: usize::MAX,
    }
}

/// A small channel with `count` random cells, an inlet carrying ligand in, first-order uptake and decay, at
/// mean speed `speed` (m/s); returns the largest |Σ parts − total| over the largest |total|, the largest
/// cell Péclet number, and the largest |anisotropy from self + from neighbours − anisotropy| over the cells
/// (component-wise, relative to the largest |anisotropy| component) when the neighbour part is evaluated on the
/// sum of the other cells' own fields and the inlet field rather than on total − own.
pub fn split_sum_error(speed: f64, count: usize) -> Result<SumErrors, VerifyError> {
    let h = 2e-6;
    let grid = Grid::new([0.0; 3], h, [48, 24, 24]);
    let chamber = ChamberBox { lower: [0.0; 3], upper: grid.extent(), periodic: [false; 3] };
    let spec = RandomLayout {
        target: RandomTarget::Count(count),
        radius: 4.0 * h,
        secretion_rate: 0.5,
        min_gap: h,
        seed: 21,
    };
    let layout = random_sequential_addition(&spec, &chamber)?;
    let mut faces = [[ChamberFace::Wall; 2]; 3];
    faces[0] = [ChamberFace::Inlet, ChamberFace::Outlet];
    let ligand = LigandParameters {
        diffusivity: 1e-10,
        decay_rate: 1e-3,
        inlet_concentration: 1e13,
        uptake: SurfaceUptake::FirstOrder { rate_constant: 2e-6 },
    };
    let case = solver::solve_case::SteadyCase {
        grid: &grid,
        layout: &layout,
        boundaries: ChamberBoundaries::new(faces),
        flow: darcy(1e-13, speed),
        ligand,
        integration_time: 3600.0,
        krylov: KrylovParams { relative_tolerance: TOLERANCE, max_iterations: 500 },
    };
    let solution = solver::solve_case::solve_steady_case(&case, &mut |_| {})?;
    let all: Vec<usize> = (0..layout.cells.len()).collect();
    let split = decompose(&inputs(&solution, &layout, ligand), &all, SplitMode::WithSumOfParts)?;
    let sum = split.sum_of_parts.unwrap_or_default();
    let total = &solution.transport.concentration;
    let scale = total.iter().fold(0.0f64, |m, c| m.max(c.abs()));
    let error = sum.iter().zip(total).fold(0.0f64, |m, (s, c)| m.max((s - c).abs())) / scale;
    // The split on the summed parts: its "total" is Σ parts, so its neighbour part is Σ_{k≠i} c_k + c_inlet.
    let mut from_parts = inputs(&solution, &layout, ligand);
    from_parts.total = &sum;
    let parts = decompose(&from_parts, &all, SplitMode::CellsOnly)?;
    let vector_scale = solution.sensing.iter().flat_map(|s| s.anisotropy).fold(0.0f64, |m, a| m.max(a.abs()));
    let vector_error = parts
        .cells
        .iter()
        .flat_map(|p| {
            let total = solution.sensing[p.cell].anisotropy;
            (0..3)
                .map(move |a| (p.anisotropy_from_self[a] + p.anisotropy_from_neighbours[a] - total[a]).abs())
        })
        .fold(0.0f64, f64::max)
        / vector_scale;
    Ok(SumErrors {
        field: error,
        max_cell_peclet: solution.transport.assembly.peclet.max_cell_peclet,
        vector: vector_error,
    })
}

/// What [`split_sum_error`] measures.
pub struct SumErrors {
    pub field: f64,
    pub max_cell_peclet: f64,
    pub vector: f64,
}

/// An isolated Robin cell in slow flow: `(self_signal_share, self_bound_rate / bound_rate, largest
/// |anisotropy from neighbours| component over |anisotropy|)`.
pub fn isolated_fractions() -> Result<(f64, f64, f64), VerifyError> {
    let (grid, layout) = isolated_sphere(8e-6, 4.0, 5.0, 1.0);
    let ligand = LigandParameters {
        diffusivity: 1e-10,
        decay_rate: 0.0,
        inlet_concentration: 0.0,
        uptake: SurfaceUptake::FirstOrder { rate_constant: 5e-6 },
    };
    let solution = solve(&grid, &layout, far_field_box(), darcy(1e-14, 5e-7), ligand)?;
    let split = decompose(&inputs(&solution, &layout, ligand), &[0], SplitMode::CellsOnly)?;
    let s = &split.cells[0];
    let total = solution.sensing[0].anisotropy;
    let norm = total.iter().map(|a| a * a).sum::<f64>().sqrt();
    let neighbours = s.anisotropy_from_neighbours.iter().fold(0.0f64, |m, a| m.max(a.abs())) / norm;
    Ok((s.self_signal_share, s.self_bound_rate / solution.sensing[0].bound_rate, neighbours))
}

pub fn run(_tier: Tier) -> Result<Vec<Check>, VerifyError> {
    let mut checks = Vec::new();
    // The operator is linear at every Péclet number: the parts add up to solver tolerance throughout.
    for (speed, label) in [(1e-6, "central advection"), (2e-4, "fitted flux"), (5e-2, "fitted flux")] {
        let tolerance = 100.0 * TOLERANCE;
        let SumErrors { field: error, max_cell_peclet: peclet, vector } = split_sum_error(speed, 6)?;
        checks.push(Check::new(
            &format!("6 cells + inlet, all split, {label} (cell Péclet up to {peclet:.3})"),
            "max |from self + from neighbours - anisotropy| / max |anisotropy|",
            vector,
            0.0,
            tolerance,
            SOURCE,
        ));
        let mut check = Check::new(
            &format!("6 cells + inlet, all split, {label} (cell Péclet up to {peclet:.3})"),
            "max |sum of parts - total| / max |total|",
            error,
            0.0,
            tolerance,
            SOURCE,
        );
        check.relative_error = error;
        check.passed = error <= tolerance;
        checks.push(check);
    }
    let (share, bound, neighbours) = isolated_fractions()?;
    checks.push(Check::new("isolated Robin cell, Pe = 0.04", "self signal share", share, 1.0, 1e-8, SOURCE));
    checks.push(Check::new(
        "isolated Robin cell, Pe = 0.04",
        "max |anisotropy from neighbours| / |anisotropy|",
        neighbours,
        0.0,
        1e-8,
        SOURCE,
    ));
    checks.push(Check::new(
        "isolated Robin cell, Pe = 0.04",
        "self / total bound rate",
        bound,
        1.0,
        1e-8,
        SOURCE,
    ));
    Ok(checks)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parts_add_up_to_the_total_and_an_isolated_cell_is_all_self() {
        let checks = run(Tier::Quick).unwrap();
        for c in &checks {
            eprintln!("{}: {} = {:.3e}", c.case, c.quantity, c.computed);
        }
        for c in &checks {
            assert!(
                c.passed,
                "{}: {} = {:.3e} (reference {}, tolerance {:.1e})",
                c.case, c.quantity, c.computed, c.reference, c.tolerance
            );
        }
        // The last case reaches cell Péclet 1000.
        let peclet = split_sum_error(5e-2, 6).unwrap().max_cell_peclet;
        assert!(peclet > 1e3, "{peclet}");
    }
}
