//! The chamber's boundary conditions, in one place: what each face kind does for the flow and for the ligand.
//!
//! | face | Darcy flow | Brinkman/Stokes flow | ligand |
//! |---|---|---|---|
//! | `Inlet` | flux `U·A` into the chamber | normal velocity `U` (or the developed profile), no slip along it | Dirichlet `c_in`: advected in-flux plus diffusion over the half spacing |
//! | `Outlet` | `p = 0` | `p = 0`, tangential velocity free | advective outflow only (no diffusive flux) |
//! | `Wall` | no flux | no slip | no flux |
//! | `Symmetry` | no flux | no normal velocity, tangential free | no flux |
//! | `Periodic` | coupled to the opposite face (along x driven by a pressure jump) | coupled | coupled |
//! | `FarField` | the undisturbed stream `p = −(μ/K) U (x − x_0)`, zero on the outlet's plane beside an outlet (else at the centre) | the undisturbed stream's velocity | asymptotic Robin condition of the cells as point sources in the stream |
//!
//! Where each is discretised: flow in `flow::darcy` and `flow::brinkman::chamber_velocity`, ligand in
//! `transport::chamber_faces`. Every face array of the face-coupled operator leaves the non-periodic boundary
//! faces to these conditions ([`zero_boundary_faces`]).

/// What a chamber face does, for flow and ligand alike.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ChamberFace {
    /// Flow enters with the prescribed mean superficial velocity; ligand concentration is fixed (Dirichlet).
    Inlet,
    /// Pressure is fixed (zero); ligand leaves by advection only (zero diffusive flux).
    Outlet,
    /// No flow and no ligand flux through the face.
    Wall,
    /// Mirror plane: no normal flow, no ligand flux (identical to `Wall` for Darcy flow and transport).
    Symmetry,
    /// Paired with the opposite face of the same axis.
    Periodic,
    /// Open boundary far from the cells: the flow takes the undisturbed uniform stream and the ligand obeys the
    /// strength-free asymptotic Robin condition of point sources in that stream.
    FarField,
}

/// Which point sources the far-field Robin condition assumes outside the chamber.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub enum FarFieldSources {
    /// Every cell at its own position, weighted by its secretion rate (superposed point-source fields).
    #[default]
    Cells,
    /// One source at the secretion-weighted centroid of the cells (DESIGN.md §4); cheaper for huge layouts.
    Centroid,
}

/// The six chamber faces, indexed `[axis][0 = min side, 1 = max side]`, and how far-field faces see the cells.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct ChamberBoundaries {
    pub faces: [[ChamberFace; 2]; 3],
    pub far_field_sources: FarFieldSources,
}

impl ChamberBoundaries {
    /// The given faces with the default far-field sources (the cells).
    pub fn new(faces: [[ChamberFace; 2]; 3]) -> Self {
        ChamberBoundaries { faces, far_field_sources: FarFieldSources::default() }
    }

    pub fn periodic_axes(&self) -> [bool; 3] {
        [0, 1, 2].map(|a| self.faces[a][0] == ChamberFace::Periodic)
    }
}

/// Sets the two boundary layers of a face array (faces 0 and n along `axis`) to zero: the coupling across them
/// is the business of the face conditions, not of the face-coupled operator.
pub fn zero_boundary_faces(grid: &mesh::Grid, axis: mesh::Axis, values: &mut [f64]) {
    let a = axis.index();
    let s = grid.face_shape(axis);
    for k in 0..s[2] {
        for j in 0..s[1] {
            for i in 0..s[0] {
                let idx = [i, j, k][a];
                if idx == 0 || idx == s[a] - 1 {
                    values[grid.face_index(axis, i, j, k)] = 0.0;
                }
            }
        }
    }
}
