//! The face-coupled operator form shared by Darcy flow and ligand transport.
//!
//! Row P of the operator applied to a cell-centred field c reads
//!
//! ```text
//! (A c)_P = Σ_faces f of P [ G_f (c_P − c_N) + Q_f,out · c_f ] + S_P c_P
//! ```
//!
//! with G_f ≥ 0 the diffusive conductance of face f (m^3/s for transport: D · open area / h), Q_f,out the
//! volumetric flux leaving P through f (m^3/s, from the signed face flux), c_f the face value given by the
//! advection scheme (central: mean of the two cells; upwind: the upstream cell), and S_P ≥ 0 a diagonal sink
//! (bulk decay · fluid volume, surface uptake, and every boundary-face term the physics puts on the diagonal).
//!
//! Only faces *between two grid cells* couple unknowns: interior faces, and the wrap-around faces of periodic
//! axes (face 0 and face n are the same face; the flux and conductance of face 0 are used, face n is ignored).
//! Non-periodic boundary faces are the caller's business: it folds them into `sink` and the right-hand side.
//! Grid cells with `active == false` (no fluid) get the identity row and must have zero coupling.

/// Discrete operator in face-coupled form on a grid of `shape = [nx, ny, nz]` cells.
#[derive(Clone, Debug)]
pub struct FaceCoupledOperator {
    pub shape: [usize; 3],
    pub periodic: [bool; 3],
    /// Diffusive conductance per face and axis (face arrays as in `mesh::Grid::face_index`), ≥ 0.
    pub conductance: [Vec<f64>; 3],
    /// Signed volumetric flux per face and axis, positive towards increasing coordinate; all zero for Darcy.
    pub flux: [Vec<f64>; 3],
    /// Diagonal sink per grid cell, ≥ 0.
    pub sink: Vec<f64>,
    /// Whether the grid cell holds fluid (an unknown); inactive rows are the identity.
    pub active: Vec<bool>,
}

/// How the face value c_f of the advective flux is formed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum AdvectionScheme {
    /// Mean of the two neighbours: second order, needs a cell Péclet number below 2 to stay monotone.
    Central,
    /// Upstream neighbour: first order, always monotone.
    Upwind,
}
