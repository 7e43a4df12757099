//! The staggered (MAC) layout: one velocity component per face family, pressure at grid-cell centres.
//!
//! Component `c` lives on the faces normal to axis `c`. Its unknowns form a box of shape `grid.shape` with one
//! more entry along `c` (the two chamber faces), except along a periodic axis, where face `n` is face `0` and
//! the box keeps `n` entries. Unknown `(i, j, k)` of component `c` sits on the grid face with the same indices
//! (`Grid::face_index(c, i, j, k)`), between grid cells `(i, j, k) − ê_c` (low side) and `(i, j, k)` (high side).

use mesh::{Axis, Grid};

/// The unknowns of one velocity component.
#[derive(Clone, Debug, PartialEq)]
pub struct ComponentGrid {
    /// Axis of the component (and the normal of its faces).
    pub axis: usize,
    /// Shape of the box of unknowns.
    pub shape: [usize; 3],
    pub periodic: [bool; 3],
}

impl ComponentGrid {
    pub fn new(grid: &Grid, axis: usize, periodic: [bool; 3]) -> Self {
        let mut shape = grid.shape;
        if !periodic[axis] {
            shape[axis] += 1;
        }
        ComponentGrid { axis, shape, periodic }
    }

    /// Number of unknowns.
    pub fn len(&self) -> usize {
        self.shape[0] * self.shape[1] * self.shape[2]
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    #[inline]
    pub fn index(&self, ijk: [usize; 3]) -> usize {
        ijk[0] + self.shape[0] * (ijk[1] + self.shape[1] * ijk[2])
    }

    #[inline]
    pub fn ijk(&self, n: usize) -> [usize; 3] {
        let [sx, sy, _] = self.shape;
        [n % sx, (n / sx) % sy, n / (sx * sy)]
    }

    /// Steps `ijk` to the next unknown in index order (i fastest), as `ijk(index(ijk) + 1)` without divisions.
    #[inline]
    pub fn advance(&self, ijk: &mut [usize; 3]) {
        ijk[0] += 1;
        if ijk[0] == self.shape[0] {
            ijk[0] = 0;
            ijk[1] += 1;
            if ijk[1] == self.shape[1] {
                ijk[1] = 0;
                ijk[2] += 1;
            }
        }
    }

    /// Centre of the face that holds unknown `ijk` (m).
    pub fn position(&self, grid: &Grid, ijk: [usize; 3]) -> [f64; 3] {
        let h = grid.spacing;
        [0, 1, 2].map(|a| {
            let offset = if a == self.axis { 0.0 } else { 0.5 };
            grid.origin[a] + (ijk[a] as f64 + offset) * h
        })
    }

    /// Flat index of the grid face holding unknown `ijk` (see `Grid::face_index`).
    pub fn face(&self, grid: &Grid, ijk: [usize; 3]) -> usize {
        grid.face_index(Axis::ALL[self.axis], ijk[0], ijk[1], ijk[2])
    }

    /// Whether unknown `ijk` lies on a (non-periodic) chamber face, and on which side (0 = min, 1 = max).
    pub fn chamber_side(&self, ijk: [usize; 3]) -> Option<usize> {
        if self.periodic[self.axis] {
            return None;
        }
        let i = ijk[self.axis];
        if i == 0 {
            Some(0)
        } else if i == self.shape[self.axis] - 1 {
            Some(1)
        } else {
            None
        }
    }

    /// Grid cells on the low and the high side of unknown `ijk` (None beyond a chamber face).
    pub fn adjacent_cells(&self, grid: &Grid, ijk: [usize; 3]) -> (Option<usize>, Option<usize>) {
        let a = self.axis;
        let n = grid.shape[a];
        let i = ijk[a];
        let mut low = ijk;
        let low_index = if i >= 1 {
            low[a] = i - 1;
            Some(grid.index(low[0], low[1], low[2]))
        } else if self.periodic[a] {
            low[a] = n - 1;
            Some(grid.index(low[0], low[1], low[2]))
        } else {
            None
        };
        let high_index = (i < n).then(|| grid.index(ijk[0], ijk[1], ijk[2]));
        (low_index, high_index)
    }

    /// The unknowns on the low and high faces of grid cell `cell` along this component's axis.
    #[inline]
    pub fn cell_faces(&self, cell: [usize; 3]) -> (usize, usize) {
        let a = self.axis;
        let mut high = cell;
        high[a] += 1;
        if high[a] == self.shape[a] {
            high[a] = 0; // periodic wrap
        }
        (self.index(cell), self.index(high))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shapes_positions_and_neighbours() {
        let grid = Grid::new([0.0; 3], 0.5, [4, 3, 2]);
        let x = ComponentGrid::new(&grid, 0, [false; 3]);
        assert_eq!(x.shape, [5, 3, 2]);
        assert_eq!(x.position(&grid, [0, 1, 1]), [0.0, 0.75, 0.75]);
        assert_eq!(x.adjacent_cells(&grid, [0, 0, 0]), (None, Some(0)));
        assert_eq!(x.adjacent_cells(&grid, [4, 0, 0]), (Some(3), None));
        assert_eq!(x.chamber_side([4, 2, 1]), Some(1));
        let y = ComponentGrid::new(&grid, 1, [false, true, false]);
        assert_eq!(y.shape, [4, 3, 2]);
        assert_eq!(y.adjacent_cells(&grid, [1, 0, 0]), (Some(grid.index(1, 2, 0)), Some(1)));
        assert_eq!(y.cell_faces([1, 2, 0]), (y.index([1, 2, 0]), y.index([1, 0, 0])));
        assert_eq!(y.chamber_side([0, 0, 0]), None);
        let mut ijk = [0; 3];
        for n in 1..y.len() {
            y.advance(&mut ijk);
            assert_eq!(ijk, y.ijk(n));
        }
    }
}
