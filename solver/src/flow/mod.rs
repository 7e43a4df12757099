//! Flow through the porous matrix around the cells: Darcy ([`darcy`]) or Brinkman/Stokes ([`brinkman`]), each
//! a folder with one file per piece, both giving a [`FlowField`].

pub mod brinkman;
pub mod darcy;
pub mod divergence;
pub mod pressure_drag;

#[cfg(test)]
mod near_face_tests;

pub use darcy::{solve_darcy, DarcyError};
pub use divergence::{check_divergence, divergence_peak, DivergencePeak, DivergenceWarning};

/// A solved flow: face fluxes for the transport, pressure for output, per-cell loads. The cell-centred velocity
/// is not stored: [`FlowField::cell_velocity`] derives it from the face fluxes where it is needed (local flow,
/// output), so it does not live through the later stages.
#[derive(Clone, Debug)]
pub struct FlowField {
    /// Signed volumetric flux through every face (m^3/s), positive towards increasing coordinate.
    pub face_flux: [Vec<f64>; 3],
    /// Pressure per grid cell (Pa), zero at the outlet (or at the far-field reference point).
    pub pressure: Vec<f64>,
    /// Force of the fluid on each cell (N).
    pub drag: Vec<[f64; 3]>,
    pub iterations: usize,
    pub relative_residual: f64,
    /// Largest net volumetric outflow of a grid cell divided by the grid-cell volume (1/s).
    pub max_divergence: f64,
    /// Grid cell `[i, j, k]` of `max_divergence`.
    pub max_divergence_cell: [usize; 3],
    /// Mean pressure on the inflow side minus mean pressure on the outflow side along x (Pa).
    pub pressure_drop: f64,
}

impl FlowField {
    /// No flow anywhere (mean velocity zero).
    pub fn at_rest(cells: usize, grid: &mesh::Grid) -> Self {
        let zero_faces = mesh::Axis::ALL.map(|axis| vec![0.0; grid.face_count(axis)]);
        FlowField {
            face_flux: zero_faces,
            pressure: vec![0.0; grid.len()],
            drag: vec![[0.0; 3]; cells],
            iterations: 0,
            relative_residual: 0.0,
            max_divergence: 0.0,
            max_divergence_cell: [0; 3],
            pressure_drop: 0.0,
        }
    }

    /// Cell-centred superficial velocity components (m/s) from face fluxes: mean of the two face velocities
    /// (flux / full face area).
    pub fn cell_velocity(grid: &mesh::Grid, face_flux: &[Vec<f64>; 3]) -> [Vec<f64>; 3] {
        mesh::Axis::ALL.map(|axis| {
            (0..grid.len()).map(|n| Self::cell_velocity_component(grid, face_flux, axis, n)).collect()
        })
    }

    /// The cell-centred superficial velocity of grid cell `n` (m/s), as [`FlowField::cell_velocity`] gives it:
    /// for readers of a few grid cells, which need not hold the whole field.
    pub fn cell_velocity_at(grid: &mesh::Grid, face_flux: &[Vec<f64>; 3], n: usize) -> [f64; 3] {
        mesh::Axis::ALL.map(|axis| Self::cell_velocity_component(grid, face_flux, axis, n))
    }

    fn cell_velocity_component(
        grid: &mesh::Grid,
        face_flux: &[Vec<f64>; 3],
        axis: mesh::Axis,
        n: usize,
    ) -> f64 {
        let a = axis.index();
        let [i, j, k] = grid.ijk(n);
        let mut hi = [i, j, k];
        hi[a] += 1;
        let lo = grid.face_index(axis, i, j, k);
        let up = grid.face_index(axis, hi[0], hi[1], hi[2]);
        0.5 * (face_flux[a][lo] + face_flux[a][up]) / grid.face_area()
    }

    /// This flow's cell-centred superficial velocity components (m/s), see [`FlowField::cell_velocity`].
    pub fn velocity(&self, grid: &mesh::Grid) -> [Vec<f64>; 3] {
        Self::cell_velocity(grid, &self.face_flux)
    }

    /// Where the divergence peaks, as computed by the solver.
    pub fn divergence_peak(&self) -> DivergencePeak {
        DivergencePeak { value: self.max_divergence, grid_cell: self.max_divergence_cell }
    }
}

/// Mean pressure of the first grid-cell layer minus that of the last along x, over the grid cells marked in
/// `active` (Pa): the pressure drop a modeller reads between inlet and outlet.
pub fn inlet_outlet_pressure_difference(grid: &mesh::Grid, p: &[f64], active: &[bool]) -> f64 {
    let layer_mean = |i: usize| {
        let (mut sum, mut count) = (0.0, 0usize);
        for k in 0..grid.shape[2] {
            for j in 0..grid.shape[1] {
                let n = grid.index(i, j, k);
                if active[n] {
                    sum += p[n];
                    count += 1;
                }
            }
        }
        if count > 0 {
            sum / count as f64
        } else {
            0.0
        }
    };
    layer_mean(0) - layer_mean(grid.shape[0] - 1)
}
