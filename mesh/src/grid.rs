//! The uniform Cartesian grid of cubic control volumes, and its index conventions.

/// One of the three coordinate directions; x is the mean-flow direction of a chamber.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Axis {
    X = 0,
    Y = 1,
    Z = 2,
}

impl Axis {
    pub const ALL: [Axis; 3] = [Axis::X, Axis::Y, Axis::Z];

    pub fn index(self) -> usize {
        self as usize
    }
}

/// Uniform grid of cubic cells of edge `spacing` (m), `shape = [nx, ny, nz]` cells, lower corner `origin` (m).
#[derive(Clone, Debug, PartialEq)]
pub struct Grid {
    pub origin: [f64; 3],
    pub spacing: f64,
    pub shape: [usize; 3],
}

impl Grid {
    pub fn new(origin: [f64; 3], spacing: f64, shape: [usize; 3]) -> Self {
        assert!(spacing > 0.0 && spacing.is_finite(), "grid spacing must be positive");
        assert!(shape.iter().all(|&n| n > 0), "grid shape must be non-zero");
        Grid { origin, spacing, shape }
    }

    /// Number of grid cells.
    pub fn len(&self) -> usize {
        self.shape[0] * self.shape[1] * self.shape[2]
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Extent of the box along each axis (m).
    pub fn extent(&self) -> [f64; 3] {
        [0, 1, 2].map(|a| self.shape[a] as f64 * self.spacing)
    }

    /// Flat index of grid cell (i, j, k): `i + nx * (j + ny * k)`.
    #[inline]
    pub fn index(&self, i: usize, j: usize, k: usize) -> usize {
        i + self.shape[0] * (j + self.shape[1] * k)
    }

    /// Inverse of [`Grid::index`].
    #[inline]
    pub fn ijk(&self, index: usize) -> [usize; 3] {
        let nx = self.shape[0];
        let ny = self.shape[1];
        [index % nx, (index / nx) % ny, index / (nx * ny)]
    }

    /// Centre of grid cell (i, j, k) (m).
    #[inline]
    pub fn cell_centre(&self, i: usize, j: usize, k: usize) -> [f64; 3] {
        let h = self.spacing;
        [
            self.origin[0] + (i as f64 + 0.5) * h,
            self.origin[1] + (j as f64 + 0.5) * h,
            self.origin[2] + (k as f64 + 0.5) * h,
        ]
    }

    /// Volume of one full grid cell (m^3).
    pub fn cell_volume(&self) -> f64 {
        self.spacing.powi(3)
    }

    /// Area of one full face (m^2).
    pub fn face_area(&self) -> f64 {
        self.spacing * self.spacing
    }

    /// Shape of the face array normal to `axis` (one more face than cells along that axis).
    pub fn face_shape(&self, axis: Axis) -> [usize; 3] {
        let mut s = self.shape;
        s[axis.index()] += 1;
        s
    }

    /// Number of faces normal to `axis`.
    pub fn face_count(&self, axis: Axis) -> usize {
        let s = self.face_shape(axis);
        s[0] * s[1] * s[2]
    }

    /// Flat index of the face normal to `axis` with lower-corner index (i, j, k) in the face array; the face
    /// normal to x with index i lies between grid cells i-1 and i.
    #[inline]
    pub fn face_index(&self, axis: Axis, i: usize, j: usize, k: usize) -> usize {
        let s = self.face_shape(axis);
        i + s[0] * (j + s[1] * k)
    }
}

/// One grid face lying on a chamber face.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BoundaryFace {
    /// Flat index of the grid cell just inside the chamber.
    pub grid_cell: usize,
    /// Flat index of the face in the face array of its axis.
    pub face: usize,
    /// Centre of the face (m).
    pub centre: [f64; 3],
}

impl Grid {
    /// The grid faces of the chamber face normal to `axis` on `side` (0: the low side, 1: the high side).
    pub fn boundary_faces(&self, axis: Axis, side: usize) -> impl Iterator<Item = BoundaryFace> + '_ {
        let a = axis.index();
        let (b, c) = ((a + 1) % 3, (a + 2) % 3);
        let (nb, nc) = (self.shape[b], self.shape[c]);
        (0..nb * nc).map(move |m| {
            let mut cell = [0usize; 3];
            cell[a] = if side == 0 { 0 } else { self.shape[a] - 1 };
            cell[b] = m % nb;
            cell[c] = m / nb;
            let mut face = cell;
            face[a] = if side == 0 { 0 } else { self.shape[a] };
            let mut centre = self.cell_centre(cell[0], cell[1], cell[2]);
            centre[a] += if side == 0 { -0.5 } else { 0.5 } * self.spacing;
            BoundaryFace {
                grid_cell: self.index(cell[0], cell[1], cell[2]),
                face: self.face_index(axis, face[0], face[1], face[2]),
                centre,
            }
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn index_round_trip_and_face_shapes() {
        let g = Grid::new([0.0; 3], 1.0, [3, 4, 5]);
        for n in 0..g.len() {
            let [i, j, k] = g.ijk(n);
            assert_eq!(g.index(i, j, k), n);
        }
        assert_eq!(g.face_count(Axis::X), 4 * 4 * 5);
        assert_eq!(g.face_count(Axis::Y), 3 * 5 * 5);
        assert_eq!(g.face_count(Axis::Z), 3 * 4 * 6);
        assert_eq!(g.face_index(Axis::Y, 2, 4, 4), 2 + 3 * (4 + 5 * 4));
    }

    #[test]
    fn boundary_faces_cover_each_chamber_face_once() {
        let g = Grid::new([0.0; 3], 0.5, [3, 4, 5]);
        let high_y: Vec<_> = g.boundary_faces(Axis::Y, 1).collect();
        assert_eq!(high_y.len(), 3 * 5);
        for f in &high_y {
            let [i, j, k] = g.ijk(f.grid_cell);
            assert_eq!(j, 3);
            assert_eq!(f.face, g.face_index(Axis::Y, i, 4, k));
            assert_eq!(f.centre[1], 2.0);
        }
        let low_x: Vec<_> = g.boundary_faces(Axis::X, 0).collect();
        assert_eq!(low_x.len(), 4 * 5);
        assert!(low_x.iter().all(|f| f.centre[0] == 0.0 && g.ijk(f.grid_cell)[0] == 0));
    }
}
