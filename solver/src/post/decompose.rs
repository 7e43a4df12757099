//! Self versus neighbours: because the steady transport is linear in its sources, the field a cell senses is
//! its own cloud plus everyone else's (plus what the inlet carries in),
//!
//! ```text
//! A c = b = Σ_i b_i + b_inlet   ⇒   c = Σ_i c_i + c_inlet,   A c_i = b_i,
//! ```
//!
//! with `b_i` the rows that cell i's secretion writes (`secretion − uptake constant` of its facets, see
//! `transport::surface_exchange`) and `b_inlet` the inflow constants of the chamber faces. For each chosen cell
//! the field of its secretion alone is solved in the full crowded geometry and flow, on the packed operator and
//! multigrid hierarchy of the total solve (no copy, no new set-up); the solves run in parallel batches of at most
//! [`DecomposeInputs::parallel_solves`], each with its own work vectors.
//!
//! What a cell senses splits the same way: its anisotropy vector `Σ j n A / Σ j A` is the own part (`j` of
//! the own field) plus the rest (`j` of total − own), both over the total sensed flux, so they add up to the
//! anisotropy exactly; [`split_cell`] evaluates one cell from its own and the total field (the transient split
//! uses it at every output time).
//!
//! The operator is linear at every Péclet number (`transport::advection`), so the parts add up to the total to
//! solver tolerance. A cell whose own solve fails is left out of the split and reported in
//! [`Decomposition::failed`]; the other cells are still split.
//!
//! Cost: one steady solve per chosen cell (about the cost of the total solve each, less the hierarchy set-up);
//! memory grows with the batch size (one set of work vectors and two fields per solve), not with the number of
//! chosen cells.

use super::integrate_surface::{CellSensing, SensingModel};
use crate::linalg::{KrylovParams, SolveError, SteadySolver};
use crate::problem::SurfaceUptake;
use crate::transport::surface_exchange::FacetExchange;
use crate::transport::TransportTerms;
use mesh::{EmbeddedGeometry, Layout};
use rayon::prelude::*;
use std::time::Instant;

/// Everything the split needs from a solved case.
pub struct DecomposeInputs<'a> {
    pub geometry: &'a EmbeddedGeometry,
    pub layout: &'a Layout,
    pub assembly: &'a TransportTerms,
    /// The solver of the total solve: its operator and hierarchy serve every right-hand side.
    pub solver: &'a SteadySolver,
    /// The solved total concentration.
    pub total: &'a [f64],
    /// The measured sensing of every cell (for the local flow direction and the totals).
    pub sensing: &'a [CellSensing],
    pub model: SensingModel,
    pub krylov: KrylovParams,
    /// Own-field solves run at once (at least one); each holds [`SteadySolver::solve_work_bytes`] and two
    /// fields, so this bounds the split's memory.
    pub parallel_solves: usize,
}

/// Self/neighbour split of one cell. Units: molecules/s; the rest dimensionless.
#[derive(Clone, Debug, PartialEq)]
pub struct CellSplit {
    /// Index of the cell in the layout.
    pub cell: usize,
    /// The part of the cell's anisotropy vector due to its own secretion: `Σ j_self n A / Σ j A`, normalised by
    /// the cell's total sensed flux, so that it adds to [`Self::anisotropy_from_neighbours`] to give the total.
    pub anisotropy_from_self: [f64; 3],
    /// The part due to everything else (the other cells and the inlet): `Σ (j − j_self) n A / Σ j A`.
    pub anisotropy_from_neighbours: [f64; 3],
    /// `|self part| / (|self part| + |neighbour part|)` of the anisotropy vector, in [0, 1]: 1 for an isolated
    /// cell, ½ when both parts are equally strong, near 0 when neighbours dominate. Bounded because it is a
    /// ratio of norms; unaffected by a small total flux because both parts share the normaliser. NaN when
    /// neither part has a direction.
    pub self_signal_share: f64,
    /// Anisotropy along the local flow of the cell's own field normalised by its own sensed flux (how
    /// directional its own cloud is in this geometry and flow, not its share of the total).
    pub own_field_anisotropy_along_flow: f64,
    /// The local flow direction of the total solve that "along the flow" refers to.
    pub local_flow_direction: [f64; 3],
    /// Ligand bound from the cell's own secretion.
    pub self_bound_rate: f64,
    /// Ligand bound from everyone else's secretion and the inlet: total − self.
    pub neighbour_bound_rate: f64,
    /// Area-mean surface concentration of the own field (molecules/m^3).
    pub self_mean_surface_concentration: f64,
    /// Krylov iterations of this right-hand side (steady), or summed over the time steps (transient).
    pub iterations: usize,
}

/// The split of the chosen cells and what it cost.
#[derive(Clone, Debug)]
pub struct Decomposition {
    pub cells: Vec<CellSplit>,
    /// Seconds to prepare the split (the facets of each cell; the operator and hierarchy are the total solve's).
    pub setup_seconds: f64,
    /// Wall seconds of all right-hand sides (after set-up).
    pub solve_seconds: f64,
    /// Right-hand sides solved (chosen cells, plus the inlet field when summed).
    pub right_hand_sides: usize,
    /// `Σ_i c_i + c_inlet` when requested (every cell chosen): must equal the total field.
    pub sum_of_parts: Option<Vec<f64>>,
    /// Chosen cells whose own solve failed (absent from `cells`); always empty when the parts are summed.
    pub failed: Vec<DecomposeError>,
}

#[derive(thiserror::Error, Clone, Debug)]
pub enum DecomposeError {
    #[error("the self-field solve of cell {cell} did not converge: relative residual {relative_residual:.3e} after {iterations} iterations")]
    NoConvergence { cell: usize, iterations: usize, relative_residual: f64 },
    #[error("the self-field solve of cell {cell} produced non-finite values")]
    NonFinite { cell: usize },
    #[error("cell index {cell} is outside the layout ({cells} cells)")]
    UnknownCell { cell: usize, cells: usize },
}

/// Right-hand side of one source: a cell's secretion (`Some(i)`) or what the chamber faces carry in (`None`).
pub fn source_rhs(geometry: &EmbeddedGeometry, assembly: &TransportTerms, source: Option<usize>) -> Vec<f64> {
    let mut rhs = vec![0.0; geometry.grid.len()];
    match source {
        Some(cell) => {
            for (facet, ex) in geometry.facets.iter().zip(&assembly.facets) {
                if facet.owner == cell {
                    rhs[facet.grid_cell] += ex.secretion - ex.uptake.constant;
                }
            }
        }
        None => {
            for b in &assembly.boundary {
                rhs[b.grid_cell] += b.inflow_constant;
            }
        }
    }
    rhs
}

/// What [`decompose`] solves besides the chosen cells' own fields.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SplitMode {
    /// The chosen cells only; a cell whose solve fails goes to [`Decomposition::failed`].
    CellsOnly,
    /// Also the inlet field, returning the sum of all parts for checking (`chosen` should then hold every
    /// cell); any failed solve is an error.
    WithSumOfParts,
}

/// Splits the field of each cell in `chosen` (layout indices), as `mode` says.
pub fn decompose(
    inputs: &DecomposeInputs,
    chosen: &[usize],
    mode: SplitMode,
) -> Result<Decomposition, DecomposeError> {
    let sum_parts = mode == SplitMode::WithSumOfParts;
    let cells = inputs.layout.cells.len();
    if let Some(&cell) = chosen.iter().find(|&&c| c >= cells) {
        return Err(DecomposeError::UnknownCell { cell, cells });
    }
    let t0 = Instant::now();
    let by_owner = facets_by_owner(inputs.geometry, cells);
    let setup_seconds = t0.elapsed().as_secs_f64();

    let t1 = Instant::now();
    let mut sources: Vec<Option<usize>> = chosen.iter().map(|&c| Some(c)).collect();
    if sum_parts {
        sources.push(None);
    }
    let n = inputs.geometry.grid.len();
    let batch = inputs.parallel_solves.clamp(1, rayon::current_num_threads().max(1));
    let mut splits = Vec::with_capacity(chosen.len());
    let mut sum = sum_parts.then(|| vec![0.0; n]);
    let mut failed = Vec::new();
    for group in sources.chunks(batch) {
        let solved: Vec<Result<SolvedPart, DecomposeError>> = group
            .par_iter()
            .map(|&source| {
                let (field, iterations) = solve_part(inputs, source)?;
                Ok((source, field, iterations))
            })
            .collect();
        for result in solved {
            let (source, field, iterations) = match result {
                Ok(part) => part,
                Err(e) if !sum_parts => {
                    failed.push(e);
                    continue;
                }
                Err(e) => return Err(e),
            };
            if let Some(cell) = source {
                splits.push(split_of(inputs, &by_owner[cell], cell, &field, iterations));
            }
            if let Some(sum) = sum.as_mut() {
                sum.iter_mut().zip(&field).for_each(|(s, f)| *s += f);
            }
        }
    }
    Ok(Decomposition {
        cells: splits,
        setup_seconds,
        solve_seconds: t1.elapsed().as_secs_f64(),
        right_hand_sides: sources.len(),
        sum_of_parts: sum,
        failed,
    })
}

/// One solved source: which (cell or inlet), its field, its Krylov iterations.
type SolvedPart = (Option<usize>, Vec<f64>, usize);

/// Solves `A c_s = b_s` for one source.
fn solve_part(inputs: &DecomposeInputs, source: Option<usize>) -> Result<(Vec<f64>, usize), DecomposeError> {
    let label = source.unwrap_or(usize::MAX);
    let rhs = source_rhs(inputs.geometry, inputs.assembly, source);
    let mut c = vec![0.0; rhs.len()];
    let map = |e: SolveError| match e {
        SolveError::NoConvergence { iterations, relative_residual, .. } => {
            DecomposeError::NoConvergence { cell: label, iterations, relative_residual }
        }
        SolveError::NonFinite { .. } => DecomposeError::NonFinite { cell: label },
    };
    let iterations = inputs.solver.solve(&rhs, &mut c, &inputs.krylov).map_err(map)?.iterations;
    if c.iter().any(|v| !v.is_finite()) {
        return Err(DecomposeError::NonFinite { cell: label });
    }
    for (value, active) in c.iter_mut().zip(inputs.solver.active()) {
        if !active {
            *value = 0.0;
        }
    }
    Ok((c, iterations))
}

/// The facets of every cell, by owner.
pub fn facets_by_owner(geometry: &EmbeddedGeometry, cells: usize) -> Vec<Vec<usize>> {
    let mut by_owner = vec![Vec::new(); cells];
    for (n, facet) in geometry.facets.iter().enumerate() {
        by_owner[facet.owner].push(n);
    }
    by_owner
}

/// Sums over one cell's facets of a field, with the weights of `integrate_surface` (bound flux, or the surface
/// concentration of a reflecting cell).
struct FacetMoments {
    /// `Σ weight`.
    weight: f64,
    /// `Σ weight n`.
    first: [f64; 3],
    bound: f64,
    /// `Σ c A`.
    concentration_area: f64,
    area: f64,
}

/// What the facet sums read: the cut surface, its exchange forms and the uptake model that picks the weight.
#[derive(Clone, Copy)]
pub struct SurfaceForms<'a> {
    pub geometry: &'a EmbeddedGeometry,
    pub exchanges: &'a [FacetExchange],
    pub uptake: SurfaceUptake,
}

fn facet_moments(forms: SurfaceForms, facets: &[usize], c: &[f64]) -> FacetMoments {
    let SurfaceForms { geometry, exchanges, uptake: uptake_model } = forms;
    let mut m = FacetMoments { weight: 0.0, first: [0.0; 3], bound: 0.0, concentration_area: 0.0, area: 0.0 };
    for &n in facets {
        let facet = &geometry.facets[n];
        let ex = &exchanges[n];
        let cf = ex.surface_value.evaluate(c);
        let uptake = ex.uptake.evaluate(c);
        let weight = match uptake_model {
            SurfaceUptake::None => cf * facet.area,
            SurfaceUptake::FirstOrder { .. } => uptake,
            SurfaceUptake::Absorbing => uptake - ex.secretion,
        };
        m.weight += weight;
        for (v, n) in m.first.iter_mut().zip(facet.normal) {
            *v += weight * n;
        }
        m.bound += uptake;
        m.concentration_area += cf * facet.area;
        m.area += facet.area;
    }
    m
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// The split of `cell` (its `facets`) from its own field `own` and the total field `total`, in the local flow
/// direction `direction` of the total solve. The facet forms are affine in the field, their constants written by
/// the cell's own secretion, so the own part evaluates them on `own` and the rest is total − own.
pub fn split_cell(
    forms: SurfaceForms,
    cell: usize,
    facets: &[usize],
    direction: [f64; 3],
    own: &[f64],
    total: &[f64],
) -> CellSplit {
    let own_m = facet_moments(forms, facets, own);
    let total_m = facet_moments(forms, facets, total);
    let rest_first: [f64; 3] = std::array::from_fn(|a| total_m.first[a] - own_m.first[a]);
    // As `integrate_surface`: no sensed flux, no anisotropy.
    let per_total =
        |v: [f64; 3]| if total_m.weight != 0.0 { v.map(|x| x / total_m.weight) } else { [0.0; 3] };
    let (own_norm, rest_norm) = (dot(own_m.first, own_m.first).sqrt(), dot(rest_first, rest_first).sqrt());
    CellSplit {
        cell,
        anisotropy_from_self: per_total(own_m.first),
        anisotropy_from_neighbours: per_total(rest_first),
        self_signal_share: if own_norm + rest_norm > 0.0 {
            own_norm / (own_norm + rest_norm)
        } else {
            f64::NAN
        },
        own_field_anisotropy_along_flow: if own_m.weight != 0.0 {
            dot(own_m.first, direction) / own_m.weight
        } else {
            0.0
        },
        local_flow_direction: direction,
        self_bound_rate: own_m.bound,
        neighbour_bound_rate: total_m.bound - own_m.bound,
        self_mean_surface_concentration: if own_m.area > 0.0 {
            own_m.concentration_area / own_m.area
        } else {
            0.0
        },
        iterations: 0,
    }
}

fn split_of(
    inputs: &DecomposeInputs,
    facets: &[usize],
    cell: usize,
    own: &[f64],
    iterations: usize,
) -> CellSplit {
    let forms = SurfaceForms {
        geometry: inputs.geometry,
        exchanges: &inputs.assembly.facets,
        uptake: inputs.model.uptake,
    };
    let e = inputs.sensing[cell].local_flow_direction;
    CellSplit { iterations, ..split_cell(forms, cell, facets, e, own, inputs.total) }
}

/// Which cells to split, chosen from a layout of `cells` cells: every cell, a list, or an evenly spread sample
/// of `n` (every ⌈cells/n⌉-th cell in layout order, which is spatially random for random layouts).
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum DecomposeSelection {
    None,
    All,
    Cells(Vec<usize>),
    Sample(usize),
}

impl DecomposeSelection {
    /// The chosen layout indices, ascending and unique.
    pub fn choose(&self, cells: usize) -> Vec<usize> {
        match self {
            DecomposeSelection::None => Vec::new(),
            DecomposeSelection::All => (0..cells).collect(),
            DecomposeSelection::Cells(list) => {
                let mut v: Vec<usize> = list.iter().copied().filter(|&c| c < cells).collect();
                v.sort_unstable();
                v.dedup();
                v
            }
            DecomposeSelection::Sample(n) => {
                if *n == 0 || cells == 0 {
                    Vec::new()
                } else if *n >= cells {
                    (0..cells).collect()
                } else {
                    // Evenly spaced in layout order: i·cells/n for i < n (distinct because n < cells).
                    (0..*n).map(|i| i * cells / n).collect()
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn selections_choose_sorted_unique_cells() {
        assert_eq!(DecomposeSelection::All.choose(3), vec![0, 1, 2]);
        assert_eq!(DecomposeSelection::None.choose(3), Vec::<usize>::new());
        assert_eq!(DecomposeSelection::Cells(vec![5, 1, 1, 9]).choose(6), vec![1, 5]);
        assert_eq!(DecomposeSelection::Sample(4).choose(10), vec![0, 2, 5, 7]);
        assert_eq!(DecomposeSelection::Sample(20).choose(3), vec![0, 1, 2]);
    }
}
