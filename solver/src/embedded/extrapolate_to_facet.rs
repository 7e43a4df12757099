//! Value of a cell-centred field at a boundary facet centroid, second order.
//!
//! Unknowns sit at grid-cell centres x_P (even when the centre itself lies inside a sphere: the value is the
//! smooth extension of the field). At a facet with centroid x_f and normal n (out of the sphere) we write
//!
//! ```text
//! c_f = c_P + g_t · d + q (d · n),     d = x_f − x_P,
//! ```
//!
//! where g_t is the tangential part of a least-squares gradient over the active 3×3×3 neighbourhood and q = ∂c/∂n
//! at the facet, which the boundary condition supplies (a given flux, or a Robin relation solved for c_f). The
//! least-squares gradient is exact for linear fields, so c_f is exact for linear fields and second-order
//! accurate in general.

use mesh::EmbeddedGeometry;

/// A linear form in the cell values: `Σ weight · c[index]`.
pub type LinearForm = Vec<(usize, f64)>;

/// Precomputed, per facet: `c_P + g_t · d` as a linear form, and `d · n`.
#[derive(Clone, Debug)]
pub struct FacetExtrapolation {
    /// Tangentially extrapolated value `c_P + g_t · d` as weights on cell values (the owner grid cell first).
    pub tangential: LinearForm,
    /// Full least-squares gradient (m⁻¹ weights per cell value): `g = Σ w c`, one weight vector per entry.
    pub gradient: Vec<(usize, [f64; 3])>,
    /// `d · n` (m): how far the facet lies beyond the cell centre along the outward normal.
    pub normal_offset: f64,
}

/// The extrapolation forms of every facet of a geometry, in the order of `geometry.facets`.
#[derive(Clone, Debug)]
pub struct FacetStencils {
    pub facets: Vec<FacetExtrapolation>,
}

/// Smallest fluid volume fraction for a grid cell to take part in a least-squares fit: values of slivers are
/// less accurate (their balance is dominated by their facet).
const MIN_FIT_FRACTION: f64 = 0.05;

impl FacetStencils {
    pub fn build(geometry: &EmbeddedGeometry) -> Self {
        let facets = geometry.facets.iter().map(|f| build_one(geometry, f)).collect();
        FacetStencils { facets }
    }

    /// Evaluates a linear form on a cell-centred field.
    pub fn evaluate(form: &[(usize, f64)], field: &[f64]) -> f64 {
        form.iter().map(|&(i, w)| w * field[i]).sum()
    }
}

fn build_one(geometry: &EmbeddedGeometry, facet: &mesh::BoundaryFacet) -> FacetExtrapolation {
    let grid = &geometry.grid;
    let h = grid.spacing;
    let [i0, j0, k0] = grid.ijk(facet.grid_cell);
    let xp = grid.cell_centre(i0, j0, k0);
    let d = sub(facet.centroid, xp);
    let n = facet.normal;

    // Neighbour offsets (in grid cells) of the fit, and their displacement vectors.
    let mut members: Vec<(usize, [f64; 3])> = Vec::with_capacity(26);
    for dk in -1i64..=1 {
        for dj in -1i64..=1 {
            for di in -1i64..=1 {
                if di == 0 && dj == 0 && dk == 0 {
                    continue;
                }
                let Some(index) = neighbour(geometry, [i0, j0, k0], [di, dj, dk]) else { continue };
                if geometry.volume_fraction[index] < MIN_FIT_FRACTION {
                    continue;
                }
                members.push((index, [di as f64 * h, dj as f64 * h, dk as f64 * h]));
            }
        }
    }

    // Weighted least squares for g: minimise Σ w_N (c_N − c_P − g·Δx_N)², w_N = 1/|Δx_N|².
    let mut m = [[0.0f64; 3]; 3];
    for &(_, dx) in &members {
        let w = 1.0 / dot(dx, dx);
        for a in 0..3 {
            for b in 0..3 {
                m[a][b] += w * dx[a] * dx[b];
            }
        }
    }
    let gradient: Vec<(usize, [f64; 3])> = match invert3(m) {
        Some(inv) => {
            let mut g = Vec::with_capacity(members.len() + 1);
            let mut centre = [0.0; 3];
            for &(index, dx) in &members {
                let w = 1.0 / dot(dx, dx);
                let v = [0, 1, 2].map(|a| w * (inv[a][0] * dx[0] + inv[a][1] * dx[1] + inv[a][2] * dx[2]));
                g.push((index, v));
                for a in 0..3 {
                    centre[a] -= v[a];
                }
            }
            g.insert(0, (facet.grid_cell, centre));
            g
        }
        // Too few fluid neighbours for a 3-D fit: fall back to a zero gradient (first order at that facet).
        None => vec![(facet.grid_cell, [0.0; 3])],
    };

    // Tangential part of d: d_t = d − (d·n) n.
    let dn = dot(d, n);
    let dt = [d[0] - dn * n[0], d[1] - dn * n[1], d[2] - dn * n[2]];
    let mut tangential: LinearForm = gradient.iter().map(|&(index, w)| (index, dot(w, dt))).collect();
    tangential[0].1 += 1.0;
    FacetExtrapolation { tangential, gradient, normal_offset: dn }
}

/// Index of the neighbour at offset `o` of grid cell `ijk`, wrapping periodic axes; `None` outside the box or
/// for an inactive (all-solid) grid cell.
fn neighbour(geometry: &EmbeddedGeometry, ijk: [usize; 3], o: [i64; 3]) -> Option<usize> {
    let grid = &geometry.grid;
    let mut c = [0usize; 3];
    for a in 0..3 {
        let n = grid.shape[a] as i64;
        let mut v = ijk[a] as i64 + o[a];
        if v < 0 || v >= n {
            if !geometry.periodic[a] {
                return None;
            }
            v = v.rem_euclid(n);
        }
        c[a] = v as usize;
    }
    let index = grid.index(c[0], c[1], c[2]);
    (geometry.volume_fraction[index] > 0.0).then_some(index)
}

fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn invert3(m: [[f64; 3]; 3]) -> Option<[[f64; 3]; 3]> {
    let det = m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
        - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
        + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
    let scale = m[0][0].abs() + m[1][1].abs() + m[2][2].abs();
    if !det.is_finite() || det.abs() <= 1e-10 * scale.powi(3) {
        return None;
    }
    let inv_det = 1.0 / det;
    let mut r = [[0.0; 3]; 3];
    r[0][0] = (m[1][1] * m[2][2] - m[1][2] * m[2][1]) * inv_det;
    r[0][1] = (m[0][2] * m[2][1] - m[0][1] * m[2][2]) * inv_det;
    r[0][2] = (m[0][1] * m[1][2] - m[0][2] * m[1][1]) * inv_det;
    r[1][0] = (m[1][2] * m[2][0] - m[1][0] * m[2][2]) * inv_det;
    r[1][1] = (m[0][0] * m[2][2] - m[0][2] * m[2][0]) * inv_det;
    r[1][2] = (m[0][2] * m[1][0] - m[0][0] * m[1][2]) * inv_det;
    r[2][0] = (m[1][0] * m[2][1] - m[1][1] * m[2][0]) * inv_det;
    r[2][1] = (m[0][1] * m[2][0] - m[0][0] * m[2][1]) * inv_det;
    r[2][2] = (m[0][0] * m[1][1] - m[0][1] * m[1][0]) * inv_det;
    Some(r)
}
