//! The superposed far-field sums on one chamber side for many sources, by Chebyshev interpolation over a
//! quadtree of patches of the side, with a stated error bound (the many-pair path of `far_field_sources.rs`).
//!
//! On a side with outward normal n = ±ê_axis the source part of β is `−Ψ/Φ`, with
//!
//! `Φ(x) = Σ_i q̃_i Y(|x − x_i|)`,  `Y(r) = e^{−γr}/r`,
//! `Ψ(x) = Σ_i q̃_i d_i F(|x − x_i|)`,  `F(r) = (γ + 1/r) e^{−γr}/r²`,
//!
//! where q̃_i carries the source's advective factor (the target's factor e^{Ux/2D} cancels in the ratio) and
//! `d_i = n·(x − x_i) ≥ 0` is the depth of source i below the side, the same for every face of the side. All
//! weights and both kernels are positive, so a relative error bound per (source, face) pair bounds the relative
//! error of Φ and of Ψ, and `|δ(Ψ/Φ)| ≤ 2ε/(1 − ε) · Ψ/Φ` when both sums err by at most ε relative.
//!
//! Scheme: the side is tiled by a quadtree of square patches (leaves of `leaf_faces`² grid faces). Each source
//! walks the tree from the root; where the bound below accepts it for a patch, its terms are summed at the
//! patch's (p + 1)² Chebyshev nodes, otherwise it descends, and at a leaf it is summed directly at each face (the
//! near field, term for term as the direct sum). A face adds its leaf's near sources and the interpolants of its
//! leaf and of every ancestor. A source is accepted once it is a few patch widths away, so it meets a bounded
//! number of patches per level: the work grows as (faces + sources × levels) × (p + 1)², levels = log₂ of the
//! side's width in leaves.
//!
//! Error bound. One source at in-plane offsets (Δu, Δv) from the centre of a patch of half-width a, at depth d.
//! Along u, with v real in the patch, f(u) = K(r(u)), `r² = (u − y_u)² + ζ²`, `ζ² ≥ ζ₀² = max(|Δv| − a, 0)² + d²`.
//! On the Bernstein ellipse E_ϱ of the patch interval (u = u₀ + a t, t = c cos θ + i b sin θ,
//! c = (ϱ + 1/ϱ)/2, b = (ϱ − 1/ϱ)/2), Re r² is harmonic, so its least value on the filled ellipse lies on the
//! boundary: `σ²/a² = min_{C ∈ [−1, 1]} (c² + b²) C² − 2 c α C + α² − b² + ζ₀²/a²`, α = |Δu|/a. When σ² > 0,
//! r = √(r²) is analytic there with |r| ≥ σ and Re r ≥ σ, so |K(r)| ≤ K(σ) for K = Y, F (positive sums of
//! e^{−γr} r^{−m}, m ≤ 3). Interpolation in p + 1 Chebyshev points then errs by at most
//! `4 K(σ) ϱ^{−p}/(ϱ − 1)` (Trefethen 2013, Approximation Theory and Approximation Practice, Thm 8.2
//! [memory]); on the real patch K ≥ K(R), R the largest source–patch distance, so relative to the source's own
//! term `E_u ≤ 4 ϱ^{−p}/(ϱ − 1) · (R/σ)³ e^{γ(R − σ)}`. The tensor interpolant errs by `E_u + Λ_p E_v`
//! (or with u, v swapped), Λ_p ≤ (2/π) ln(p + 1) + 1 the Lebesgue constant of Chebyshev points (ibid.,
//! Thm 15.2 [memory]). A source is accepted at a patch when this bound, minimised over a few ϱ, is at most
//! `tolerance`.

use rayon::prelude::*;

/// How the sums of one side are split into interpolated and direct parts.
#[derive(Clone, Copy, Debug)]
pub struct PatchSumParams {
    /// Bound on the relative error of Φ and of Ψ (each).
    pub tolerance: f64,
    /// Degree p of the interpolant in each in-plane direction ((p + 1)² nodes per patch).
    pub degree: usize,
    /// Grid faces along each edge of a leaf patch.
    pub leaf_faces: usize,
}

impl Default for PatchSumParams {
    fn default() -> Self {
        PatchSumParams { tolerance: 1e-8, degree: 16, leaf_faces: 16 }
    }
}

/// The sources as one side sees them.
pub struct SideSources<'a> {
    pub centres: &'a [[f64; 3]],
    /// q̃_i, the weights of Φ (all > 0).
    pub weights: &'a [f64],
    /// q̃_i d_i, the weights of Ψ (all ≥ 0).
    pub depth_weights: &'a [f64],
}

/// One side of the chamber: the plane `x_axis = position`.
#[derive(Clone, Copy, Debug)]
pub struct Side {
    pub axis: usize,
    pub position: f64,
}

/// (Φ, Ψ) at every point of `points` (face centres on `side`, on a grid of spacing `spacing`), with the
/// screening rate `gamma` (1/m); the near field uses `r ≥ min_distance` as the direct sum does. `None` when the
/// points do not lie on one face grid of the side.
pub fn side_sums(
    sources: &SideSources,
    side: Side,
    points: &[[f64; 3]],
    spacing: f64,
    gamma: f64,
    min_distance: f64,
    params: &PatchSumParams,
) -> Option<Vec<[f64; 2]>> {
    let nodes = chebyshev_points(params.degree);
    sums_at_nodes(sources, side, points, spacing, gamma, min_distance, params, &nodes)
}

/// [`side_sums`] with the interpolation nodes given: the acceptance rule assumes `params.degree`, so a test can
/// interpolate at a lower degree than the rule allows for and see the bound break.
#[allow(clippy::too_many_arguments)]
fn sums_at_nodes(
    sources: &SideSources,
    side: Side,
    points: &[[f64; 3]],
    spacing: f64,
    gamma: f64,
    min_distance: f64,
    params: &PatchSumParams,
    nodes: &[f64],
) -> Option<Vec<[f64; 2]>> {
    let tree = PatchTree::new(side, points, spacing, params.leaf_faces)?;
    let rule = AcceptanceRule::new(params, gamma);
    let (accepted, near) = tree.assign(sources, &rule);
    let values: Vec<Vec<Vec<f64>>> = accepted
        .iter()
        .enumerate()
        .map(|(level, patches)| {
            patches
                .par_iter()
                .enumerate()
                .map(|(index, list)| tree.node_sums(sources, level, index, list, nodes, gamma))
                .collect()
        })
        .collect();
    let sums = points
        .par_iter()
        .zip(&tree.leaf_of_point)
        .map(|(x, &leaf)| {
            let (mut phi, mut psi) = (0.0, 0.0);
            for &s in &near[leaf] {
                let s = s as usize;
                let r = distance(x, &sources.centres[s]).max(min_distance);
                let y = (-gamma * r).exp() / r;
                phi += sources.weights[s] * y;
                psi += sources.depth_weights[s] * (gamma + 1.0 / r) * y / r;
            }
            let (lu, lv) = (leaf / tree.leaves_per_edge, leaf % tree.leaves_per_edge);
            for (level, level_values) in values.iter().enumerate() {
                let shift = tree.levels - 1 - level;
                let index = (lu >> shift) * (1 << level) + (lv >> shift);
                let patch = &level_values[index];
                if !patch.is_empty() {
                    let [dp, ds] = tree.interpolate(level, index, patch, nodes, x);
                    phi += dp;
                    psi += ds;
                }
            }
            [phi, psi]
        })
        .collect();
    Some(sums)
}

fn distance(a: &[f64; 3], b: &[f64; 3]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

/// Chebyshev points of the second kind, `cos(jπ/p)`, j = 0 … p.
fn chebyshev_points(degree: usize) -> Vec<f64> {
    (0..=degree).map(|j| (j as f64 * std::f64::consts::PI / degree as f64).cos()).collect()
}

/// Barycentric weights of `points` at t ∈ [−1, 1] (Berrut & Trefethen 2004, eq. 5.4 [memory]): the values
/// `λ_j(t)` with `p(t) = Σ λ_j f_j`.
fn barycentric(points: &[f64], t: f64) -> Vec<f64> {
    let last = points.len() - 1;
    let weight = |j: usize| {
        let w = if j.is_multiple_of(2) { 1.0 } else { -1.0 };
        if j == 0 || j == last {
            0.5 * w
        } else {
            w
        }
    };
    if let Some(hit) = points.iter().position(|&x| x == t) {
        return (0..points.len()).map(|j| if j == hit { 1.0 } else { 0.0 }).collect();
    }
    let terms: Vec<f64> = points.iter().enumerate().map(|(j, &x)| weight(j) / (t - x)).collect();
    let total: f64 = terms.iter().sum();
    terms.into_iter().map(|w| w / total).collect()
}

/// When a source may be summed at a patch's nodes: the bound of the module doc at most `tolerance`.
struct AcceptanceRule {
    tolerance: f64,
    gamma: f64,
    lebesgue: f64,
    /// (c, b, 4 ϱ^{−p}/(ϱ − 1)) of each trial ellipse.
    ellipses: Vec<[f64; 3]>,
}

impl AcceptanceRule {
    fn new(params: &PatchSumParams, gamma: f64) -> Self {
        let p = params.degree as f64;
        let ellipses = [1.5, 2.0, 3.0, 4.5, 7.0, 11.0, 17.0, 26.0]
            .iter()
            .map(|&rho: &f64| {
                [0.5 * (rho + 1.0 / rho), 0.5 * (rho - 1.0 / rho), 4.0 * rho.powf(-p) / (rho - 1.0)]
            })
            .collect();
        AcceptanceRule {
            tolerance: params.tolerance,
            gamma,
            lebesgue: 2.0 / std::f64::consts::PI * (p + 1.0).ln() + 1.0,
            ellipses,
        }
    }

    /// Relative interpolation error bound for a source at in-plane offsets `du`, `dv` from the centre of a patch
    /// of half-width `a` and at depth `d` (all m).
    fn bound(&self, du: f64, dv: f64, d: f64, a: f64) -> f64 {
        let (alpha, nu, delta) = (du.abs() / a, dv.abs() / a, d / a);
        let far = ((alpha + 1.0).powi(2) + (nu + 1.0).powi(2) + delta * delta).sqrt();
        let e_u = self.one_direction(alpha, nu, delta, far, a);
        let e_v = self.one_direction(nu, alpha, delta, far, a);
        e_u + e_v + (self.lebesgue - 1.0) * e_u.min(e_v)
    }

    /// `E_u` of the module doc, lengths in units of the half-width `a`.
    fn one_direction(&self, alpha: f64, nu: f64, delta: f64, far: f64, a: f64) -> f64 {
        let zeta2 = (nu - 1.0).max(0.0).powi(2) + delta * delta;
        let mut best = f64::INFINITY;
        for &[c, b, factor] in &self.ellipses {
            let q = c * c + b * b;
            let cc = (c * alpha / q).min(1.0);
            let s2 = q * cc * cc - 2.0 * c * alpha * cc + alpha * alpha - b * b + zeta2;
            if s2 > 0.0 {
                let s = s2.sqrt();
                best = best.min(factor * (far / s).powi(3) * (self.gamma * a * (far - s)).exp());
            }
        }
        best
    }

    fn accepts(&self, du: f64, dv: f64, d: f64, a: f64) -> bool {
        // Within one half-width of the patch no trial ellipse can pass: skip the bound.
        let gap2 = (du.abs() - a).max(0.0).powi(2) + (dv.abs() - a).max(0.0).powi(2) + d * d;
        gap2 > a * a && self.bound(du, dv, d, a) <= self.tolerance
    }
}

/// The quadtree of patches over the face grid of one side. Level 0 is one patch over the whole side; level
/// `levels − 1` holds the leaves, `leaves_per_edge`² of them (some beyond the grid, never used).
struct PatchTree {
    side: Side,
    /// The two in-plane axes (u, v).
    plane_axes: [usize; 2],
    /// Lower corner of the face grid (u, v), m.
    corner: [f64; 2],
    leaf_width: f64,
    levels: usize,
    leaves_per_edge: usize,
    /// Leaves along u and v that hold faces (the rest of the square is never visited).
    leaves_used: [usize; 2],
    /// Leaf (u index × leaves_per_edge + v index) of every point.
    leaf_of_point: Vec<usize>,
}

impl PatchTree {
    fn new(side: Side, points: &[[f64; 3]], spacing: f64, leaf_faces: usize) -> Option<Self> {
        let plane_axes = [(side.axis + 1) % 3, (side.axis + 2) % 3];
        let first = points.first()?;
        let lowest = |k: usize| points.iter().map(|x| x[plane_axes[k]]).fold(first[plane_axes[k]], f64::min);
        let centre0 = [lowest(0), lowest(1)];
        let mut indices = Vec::with_capacity(points.len());
        for x in points {
            if x[side.axis] != side.position {
                return None;
            }
            let index = [0, 1].map(|k| (x[plane_axes[k]] - centre0[k]) / spacing);
            if index.iter().any(|&i| (i - i.round()).abs() > 1e-6) {
                return None;
            }
            indices.push(index.map(|i| i.round() as usize));
        }
        let leaves_used =
            [0, 1].map(|k| (indices.iter().map(|i| i[k]).max().unwrap_or(0) + 1).div_ceil(leaf_faces));
        let levels = leaves_used[0].max(leaves_used[1]).next_power_of_two().trailing_zeros() as usize + 1;
        let leaves_per_edge = 1 << (levels - 1);
        let leaf_of_point =
            indices.iter().map(|i| (i[0] / leaf_faces) * leaves_per_edge + i[1] / leaf_faces).collect();
        Some(PatchTree {
            side,
            plane_axes,
            corner: centre0.map(|c| c - 0.5 * spacing),
            leaf_width: leaf_faces as f64 * spacing,
            levels,
            leaves_per_edge,
            leaves_used,
            leaf_of_point,
        })
    }

    /// Centre (u, v) and half-width of patch `index` (u index × 2^level + v index) of `level`.
    fn patch(&self, level: usize, index: usize) -> ([f64; 2], f64) {
        let per_edge = 1 << level;
        let width = self.leaf_width * (self.leaves_per_edge / per_edge) as f64;
        let (iu, iv) = (index / per_edge, index % per_edge);
        let centre = [self.corner[0] + (iu as f64 + 0.5) * width, self.corner[1] + (iv as f64 + 0.5) * width];
        (centre, 0.5 * width)
    }

    /// Source offsets (Δu, Δv) from a patch centre, and depth below the side.
    fn offsets(&self, y: &[f64; 3], centre: [f64; 2]) -> (f64, f64, f64) {
        let [a0, a1] = self.plane_axes;
        (y[a0] - centre[0], y[a1] - centre[1], (self.side.position - y[self.side.axis]).abs())
    }

    /// Per level, the sources summed at each patch's nodes (in source order), and per leaf the near sources.
    fn assign(&self, sources: &SideSources, rule: &AcceptanceRule) -> (Vec<Vec<Vec<u32>>>, Vec<Vec<u32>>) {
        let mut accepted: Vec<Vec<Vec<u32>>> =
            (0..self.levels).map(|l| vec![Vec::new(); 1 << (2 * l)]).collect();
        let mut near = vec![Vec::new(); self.leaves_per_edge * self.leaves_per_edge];
        // Walks in parallel over blocks of sources, gathered in source order (the same on any thread count).
        for block in (0..sources.centres.len()).collect::<Vec<_>>().chunks(4096) {
            let walks: Vec<Vec<(usize, usize)>> =
                block.par_iter().map(|&s| self.walk(sources, s, rule)).collect();
            for (&s, walk) in block.iter().zip(walks) {
                for (level, index) in walk {
                    if level == usize::MAX {
                        near[index].push(s as u32);
                    } else {
                        accepted[level][index].push(s as u32);
                    }
                }
            }
        }
        (accepted, near)
    }

    /// The patches where source `s` is summed at nodes `(level, index)`, and its near leaves `(usize::MAX, leaf)`.
    fn walk(&self, sources: &SideSources, s: usize, rule: &AcceptanceRule) -> Vec<(usize, usize)> {
        let y = &sources.centres[s];
        let mut out = Vec::new();
        let mut stack = vec![(0usize, 0usize)];
        while let Some((level, index)) = stack.pop() {
            let per_edge = 1 << level;
            let span = self.leaves_per_edge / per_edge;
            let (iu, iv) = (index / per_edge, index % per_edge);
            if iu * span >= self.leaves_used[0] || iv * span >= self.leaves_used[1] {
                continue;
            }
            let (centre, a) = self.patch(level, index);
            let (du, dv, d) = self.offsets(y, centre);
            if rule.accepts(du, dv, d, a) {
                out.push((level, index));
            } else if level + 1 == self.levels {
                out.push((usize::MAX, iu * self.leaves_per_edge + iv));
            } else {
                for (cu, cv) in [(0, 0), (0, 1), (1, 0), (1, 1)] {
                    stack.push((level + 1, (2 * iu + cu) * (2 * per_edge) + 2 * iv + cv));
                }
            }
        }
        out
    }

    /// Φ then Ψ at the (p + 1)² nodes of a patch from the sources in `list`; empty when the list is.
    fn node_sums(
        &self,
        sources: &SideSources,
        level: usize,
        index: usize,
        list: &[u32],
        nodes: &[f64],
        gamma: f64,
    ) -> Vec<f64> {
        if list.is_empty() {
            return Vec::new();
        }
        let (centre, a) = self.patch(level, index);
        let n = nodes.len();
        let mut sums = vec![0.0; 2 * n * n];
        let (phi, psi) = sums.split_at_mut(n * n);
        let mut along_v = vec![0.0; n];
        for &s in list {
            let s = s as usize;
            let (du, dv, d) = self.offsets(&sources.centres[s], centre);
            let (w, wd) = (sources.weights[s], sources.depth_weights[s]);
            for (v2, &tv) in along_v.iter_mut().zip(nodes) {
                *v2 = (a * tv - dv).powi(2);
            }
            for ((&tu, phi_row), psi_row) in
                nodes.iter().zip(phi.chunks_exact_mut(n)).zip(psi.chunks_exact_mut(n))
            {
                let ru2 = (a * tu - du).powi(2) + d * d;
                for ((&v2, f), g) in along_v.iter().zip(phi_row.iter_mut()).zip(psi_row.iter_mut()) {
                    // One division per node: the kernels share 1/r.
                    let r = (ru2 + v2).sqrt();
                    let inverse = 1.0 / r;
                    let y = (-gamma * r).exp() * inverse;
                    *f += w * y;
                    *g += wd * (gamma + inverse) * y * inverse;
                }
            }
        }
        sums
    }

    /// The patch interpolants of Φ and Ψ at point `x`.
    fn interpolate(
        &self,
        level: usize,
        index: usize,
        values: &[f64],
        nodes: &[f64],
        x: &[f64; 3],
    ) -> [f64; 2] {
        let (centre, a) = self.patch(level, index);
        let lu = barycentric(nodes, (x[self.plane_axes[0]] - centre[0]) / a);
        let lv = barycentric(nodes, (x[self.plane_axes[1]] - centre[1]) / a);
        let n = nodes.len();
        let mut out = [0.0; 2];
        for (field, o) in out.iter_mut().enumerate() {
            let block = &values[field * n * n..(field + 1) * n * n];
            for (j, &wu) in lu.iter().enumerate() {
                let row: f64 = block[j * n..(j + 1) * n].iter().zip(&lv).map(|(f, w)| f * w).sum();
                *o += wu * row;
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    use numkit::Xoshiro256StarStar;

    /// Every accepted (source, patch) pair interpolates its own Y and F terms within the stated bound, at points
    /// all over the patch, for loose tolerances where the error is far above rounding.
    #[test]
    fn one_source_interpolation_error_is_within_the_bound() {
        let mut rng = Xoshiro256StarStar::seed_from_u64(15);
        let mut checked = 0;
        let mut tightest: f64 = 0.0;
        for (degree, tolerance, gamma) in [(4, 1e-2, 0.0), (6, 1e-3, 0.3), (8, 1e-4, 1.0), (12, 1e-8, 0.5)] {
            let params = PatchSumParams { tolerance, degree, leaf_faces: 8 };
            let rule = AcceptanceRule::new(&params, gamma);
            let nodes = chebyshev_points(degree);
            let a = 1.0;
            for _ in 0..400 {
                let (du, dv, d) =
                    (12.0 * rng.next_f64() - 6.0, 12.0 * rng.next_f64() - 6.0, 6.0 * rng.next_f64());
                if !rule.accepts(du, dv, d, a) {
                    continue;
                }
                let bound = rule.bound(du, dv, d, a);
                let kernels =
                    |r: f64| [(-gamma * r).exp() / r, (gamma + 1.0 / r) * (-gamma * r).exp() / (r * r)];
                let at = |u: f64, v: f64| kernels(((u - du).powi(2) + (v - dv).powi(2) + d * d).sqrt());
                let n = nodes.len();
                let mut values = vec![0.0; 2 * n * n];
                for (j, &u) in nodes.iter().enumerate() {
                    for (k, &v) in nodes.iter().enumerate() {
                        let [y, f] = at(u, v);
                        values[j * n + k] = y;
                        values[n * n + j * n + k] = f;
                    }
                }
                for _ in 0..20 {
                    let (u, v) = (2.0 * rng.next_f64() - 1.0, 2.0 * rng.next_f64() - 1.0);
                    let (lu, lv) = (barycentric(&nodes, u), barycentric(&nodes, v));
                    for (field, exact) in at(u, v).into_iter().enumerate() {
                        let block = &values[field * n * n..(field + 1) * n * n];
                        let approx: f64 = (0..n)
                            .map(|j| lu[j] * (0..n).map(|k| lv[k] * block[j * n + k]).sum::<f64>())
                            .sum();
                        let relative = (approx - exact).abs() / exact;
                        assert!(
                            relative <= bound,
                            "p {degree}: {relative:e} > bound {bound:e} at {du} {dv} {d}"
                        );
                        tightest = tightest.max(relative / bound);
                    }
                }
                checked += 1;
            }
        }
        assert!(checked > 200, "only {checked} accepted pairs");
        // The bound is not vacuous: somewhere the error reaches a visible share of it.
        assert!(tightest > 1e-4, "largest error / bound {tightest:e}");
    }

    /// Largest relative error of Φ and of Ψ against their direct sums on one side, the patch sums interpolating
    /// at `degree` while accepting sources as `params` says.
    fn worst_relative_error(params: &PatchSumParams, degree: usize) -> f64 {
        let mut rng = Xoshiro256StarStar::seed_from_u64(2026);
        let (h, n, count) = (2e-6, 96usize, 3000);
        let gamma = 5099.0; // U = 1 µm/s, D = 1e-10 m²/s, k = 1e-4 /s
        let width = n as f64 * h;
        // The side z = width of a cube holding the sources (random, as a tissue block's cells).
        let centres: Vec<[f64; 3]> = (0..count)
            .map(|_| [rng.next_f64() * width, rng.next_f64() * width, rng.next_f64() * width])
            .collect();
        let weights: Vec<f64> = (0..count).map(|_| 0.2 + rng.next_f64()).collect();
        let depth_weights: Vec<f64> = weights.iter().zip(&centres).map(|(w, c)| w * (width - c[2])).collect();
        let sources = SideSources { centres: &centres, weights: &weights, depth_weights: &depth_weights };
        let points: Vec<[f64; 3]> =
            (0..n * n).map(|i| [((i / n) as f64 + 0.5) * h, ((i % n) as f64 + 0.5) * h, width]).collect();
        let side = Side { axis: 2, position: width };
        let nodes = chebyshev_points(degree);
        let sums =
            sums_at_nodes(&sources, side, &points, h, gamma, h, params, &nodes).expect("one face grid");
        let mut worst: f64 = 0.0;
        for (x, [phi, psi]) in points.iter().zip(sums) {
            let (mut direct_phi, mut direct_psi) = (0.0, 0.0);
            for s in 0..count {
                let r = distance(x, &centres[s]).max(h);
                let y = (-gamma * r).exp() / r;
                direct_phi += weights[s] * y;
                direct_psi += depth_weights[s] * (gamma + 1.0 / r) * y / r;
            }
            worst =
                worst.max((phi - direct_phi).abs() / direct_phi).max((psi - direct_psi).abs() / direct_psi);
        }
        worst
    }

    /// The shipped parameters on a random layout: Φ and Ψ within the stated bound (`tolerance`, relative, each)
    /// of their direct sums on every face. The check can fail: interpolating at half the degree the acceptance
    /// rule assumes breaks the bound (measured, 2026-12-05: 3.8e-13 at degree 16, 1.8e-10 at 12, 1.6e-8 at 9,
    /// 1.3e-7 at 8; the bound is conservative, so a small lowering stays within it).
    #[test]
    fn shipped_patch_sums_stay_within_the_stated_bound() {
        let params = PatchSumParams::default();
        let worst = worst_relative_error(&params, params.degree);
        assert!(worst <= params.tolerance, "worst {worst:e} > bound {:e}", params.tolerance);
        assert!(worst > 0.0, "the patch sums were not used");
        let lowered = params.degree / 2;
        let broken = worst_relative_error(&params, lowered);
        assert!(
            broken > params.tolerance,
            "degree {lowered}: {broken:e} still within {:e}",
            params.tolerance
        );
    }

    /// Barycentric interpolation in Chebyshev points reproduces a polynomial of the same degree.
    #[test]
    fn barycentric_reproduces_polynomials() {
        let nodes = chebyshev_points(6);
        let poly = |t: f64| 1.0 - 2.0 * t + 0.5 * t.powi(3) + t.powi(6);
        let values: Vec<f64> = nodes.iter().map(|&t| poly(t)).collect();
        for t in [-1.0, -0.73, 0.0, 0.41, 1.0] {
            let p: f64 = barycentric(&nodes, t).iter().zip(&values).map(|(l, f)| l * f).sum();
            assert!((p - poly(t)).abs() < 1e-13, "{t}: {p} vs {}", poly(t));
        }
    }
}
