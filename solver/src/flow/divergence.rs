//! The discrete divergence of a solved flow: where the net outflow of a grid cell is largest, and the check that
//! every run makes of it.
//!
//! Continuity holds cell by cell to the solver tolerance, so the net outflow per volume of any fluid grid cell
//! should stay below `tolerance × U/h` (U the mean superficial velocity, h the spacing; the velocity-gradient
//! scale of the grid, common practice). A larger value means a face flux with nowhere to go.

use mesh::{Axis, Grid};
use rayon::prelude::*;

/// The largest |net outflow| / grid-cell volume over the active grid cells and where it is.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DivergencePeak {
    /// |net outflow| / volume (1/s).
    pub value: f64,
    /// Grid-cell indices `[i, j, k]` of the maximum (the lowest flat index among equal values).
    pub grid_cell: [usize; 3],
}

impl DivergencePeak {
    pub const NONE: DivergencePeak = DivergencePeak { value: 0.0, grid_cell: [0; 3] };
}

/// Net volumetric outflow of grid cell `n` (m³/s).
fn net_outflow(grid: &Grid, face_flux: &[Vec<f64>; 3], n: usize) -> f64 {
    let [i, j, k] = grid.ijk(n);
    let mut net = 0.0;
    for axis in Axis::ALL {
        let a = axis.index();
        let mut hi = [i, j, k];
        hi[a] += 1;
        net += face_flux[a][grid.face_index(axis, hi[0], hi[1], hi[2])]
            - face_flux[a][grid.face_index(axis, i, j, k)];
    }
    net
}

/// The peak over the grid cells marked in `active`; the same at any thread count (ties go to the lowest index).
pub fn divergence_peak(grid: &Grid, face_flux: &[Vec<f64>; 3], active: &[bool]) -> DivergencePeak {
    let volume = grid.cell_volume();
    let (value, n) = (0..grid.len())
        .into_par_iter()
        .filter(|&n| active[n])
        .map(|n| ((net_outflow(grid, face_flux, n) / volume).abs(), n))
        .reduce(|| (0.0, 0), |a, b| if b.0 > a.0 || (b.0 == a.0 && b.1 < a.1) { b } else { a });
    DivergencePeak { value, grid_cell: grid.ijk(n) }
}

/// A flow whose divergence exceeds the solver tolerance times `U/h` somewhere.
#[derive(Clone, Debug, PartialEq)]
pub struct DivergenceWarning {
    pub peak: DivergencePeak,
    /// Centre of the grid cell of the peak (m).
    pub position: [f64; 3],
    /// `tolerance × U/h` (1/s).
    pub limit: f64,
}

impl std::fmt::Display for DivergenceWarning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let [i, j, k] = self.peak.grid_cell;
        let [x, y, z] = self.position;
        write!(
            f,
            "the flow is not divergence-free: grid cell ({i}, {j}, {k}) at ({x:.3e}, {y:.3e}, {z:.3e}) m loses \
             {:.3e} /s of its volume, above the solver tolerance times U/h ({:.3e} /s); the ligand there is not \
             conserved to the tolerance",
            self.peak.value, self.limit
        )
    }
}

/// The warning when `peak` exceeds `tolerance × |mean_velocity| / h`.
pub fn check_divergence(
    grid: &Grid,
    peak: &DivergencePeak,
    mean_velocity: f64,
    tolerance: f64,
) -> Option<DivergenceWarning> {
    let limit = tolerance * mean_velocity.abs() / grid.spacing;
    let [i, j, k] = peak.grid_cell;
    (peak.value > limit).then(|| DivergenceWarning {
        peak: *peak,
        position: grid.cell_centre(i, j, k),
        limit,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn peak_is_located_and_checked() {
        let grid = Grid::new([0.0; 3], 0.5, [3, 2, 2]);
        let mut face_flux = Axis::ALL.map(|axis| vec![0.0; grid.face_count(axis)]);
        // 0.25 m³/s into grid cell (1, 1, 0) through its low x face, nothing out: 2 /s of its 0.125 m³.
        face_flux[0][grid.face_index(Axis::X, 1, 1, 0)] = 0.25;
        let active = vec![true; grid.len()];
        let peak = divergence_peak(&grid, &face_flux, &active);
        // Cell (0, 1, 0) loses the same flux: the tie goes to the lower index.
        assert_eq!(peak.grid_cell, [0, 1, 0]);
        assert!((peak.value - 2.0).abs() < 1e-12);
        let mut inactive = active.clone();
        inactive[grid.index(0, 1, 0)] = false;
        assert_eq!(divergence_peak(&grid, &face_flux, &inactive).grid_cell, [1, 1, 0]);
        // U/h = 2 /s: tolerance 1 is just met, 0.9 is not.
        assert!(check_divergence(&grid, &peak, 1.0, 1.0).is_none());
        let warning = check_divergence(&grid, &peak, 1.0, 0.9).expect("above the limit");
        assert_eq!(warning.position, [0.25, 0.75, 0.25]);
        assert!(warning.to_string().contains("grid cell (0, 1, 0)"));
    }
}
