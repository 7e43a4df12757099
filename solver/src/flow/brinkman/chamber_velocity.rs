//! What each chamber face prescribes for the velocity.
//!
//! For the component normal to a face: inlet → the fully developed profile into the chamber; wall, symmetry → 0;
//! far field → the undisturbed stream (or caller data); outlet → unknown (zero normal stress, `p = 0` on the face
//! and no normal gradient of the normal velocity); periodic → wrap-around.
//! For a tangential component (whose nodes sit half a spacing inside the face): inlet, wall → no slip (value 0 on
//! the face); far field → the stream's value on the face; symmetry, outlet → zero shear (no link).

use crate::problem::{ChamberBoundaries, ChamberFace};
use mesh::Grid;
use std::sync::Arc;

/// Velocity data on far-field faces: `(position) → velocity` (m → m/s).
pub type VelocityData = Arc<dyn Fn([f64; 3]) -> [f64; 3] + Send + Sync>;

/// How a tangential component meets a chamber face.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum TangentialCondition {
    /// The component takes `value` on the face (half a spacing from its nodes).
    Value(f64),
    /// No shear: no link through the face.
    Free,
}

/// The chamber faces with their velocity data.
#[derive(Clone)]
pub struct ChamberVelocity {
    pub boundaries: ChamberBoundaries,
    grid: Grid,
    /// Inflow speed per inlet face `[axis][side]`, flattened over the two other axes (see `inlet_profile`).
    inlet: [[Option<Vec<f64>>; 2]; 3],
    far_field: VelocityData,
}

impl ChamberVelocity {
    pub fn new(
        grid: &Grid,
        boundaries: ChamberBoundaries,
        inlet: [[Option<Vec<f64>>; 2]; 3],
        far_field: VelocityData,
    ) -> Self {
        ChamberVelocity { boundaries, grid: grid.clone(), inlet, far_field }
    }

    pub fn kind(&self, axis: usize, side: usize) -> ChamberFace {
        self.boundaries.faces[axis][side]
    }

    /// Prescribed normal velocity (along +axis) on the chamber face `(axis, side)` at `position`, or None where
    /// the normal velocity is an unknown (outlet, periodic).
    pub fn normal_value(&self, axis: usize, side: usize, position: [f64; 3]) -> Option<f64> {
        match self.kind(axis, side) {
            ChamberFace::Wall | ChamberFace::Symmetry => Some(0.0),
            ChamberFace::Outlet | ChamberFace::Periodic => None,
            ChamberFace::FarField => Some((self.far_field)(position)[axis]),
            ChamberFace::Inlet => {
                let speed = self.inlet_speed(axis, side, position);
                Some(if side == 0 { speed } else { -speed })
            }
        }
    }

    /// Condition of component `component` (≠ axis) on the chamber face `(axis, side)` at `position` (on the face).
    pub fn tangential(
        &self,
        axis: usize,
        side: usize,
        component: usize,
        position: [f64; 3],
    ) -> TangentialCondition {
        match self.kind(axis, side) {
            ChamberFace::Wall | ChamberFace::Inlet => TangentialCondition::Value(0.0),
            ChamberFace::FarField => TangentialCondition::Value((self.far_field)(position)[component]),
            ChamberFace::Symmetry | ChamberFace::Outlet | ChamberFace::Periodic => TangentialCondition::Free,
        }
    }

    fn inlet_speed(&self, axis: usize, side: usize, position: [f64; 3]) -> f64 {
        let Some(profile) = &self.inlet[axis][side] else { return 0.0 };
        let (b, c) = ((axis + 1) % 3, (axis + 2) % 3);
        let cell = |a: usize| {
            let i = ((position[a] - self.grid.origin[a]) / self.grid.spacing).floor();
            (i.max(0.0) as usize).min(self.grid.shape[a] - 1)
        };
        profile[cell(b) + self.grid.shape[b] * cell(c)]
    }
}
