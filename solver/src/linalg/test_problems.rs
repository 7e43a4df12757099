//! Hand-built operators for the linear-algebra tests and the steady-solve benchmark (compiled only for tests
//! and with the `test-problems` feature, which the bench crate turns on): random coefficients, and a unit
//! box with spherical holes (grid cells whose centre lies inside a sphere are inactive), Dirichlet walls folded
//! into the sink, and a divergence-free potential flow around the holes.

use super::multigrid::MultigridParams;
use super::operator::{AdvectionScheme, FaceCoupledOperator};
use super::stencil::face_index;
use super::{KrylovParams, LinearSystem, SteadySolver};

/// Deterministic pseudo-random numbers in [−1, 1) from the shared seeded generator.
pub fn random_vector(n: usize, seed: u64) -> Vec<f64> {
    let mut rng = numkit::Xoshiro256StarStar::seed_from_u64(seed);
    (0..n).map(|_| 2.0 * rng.next_f64() - 1.0).collect()
}

fn face_counts(shape: [usize; 3]) -> [usize; 3] {
    [0, 1, 2].map(|a| {
        let mut s = shape;
        s[a] += 1;
        s[0] * s[1] * s[2]
    })
}

/// Conductances in [0.5, 1.5], fluxes in [−0.5, 0.5], sinks in [0.05, 0.25], every cell active.
pub fn random_operator(shape: [usize; 3], periodic: [bool; 3], seed: u64) -> FaceCoupledOperator {
    let n = shape[0] * shape[1] * shape[2];
    let counts = face_counts(shape);
    let conductance = [0, 1, 2]
        .map(|a| random_vector(counts[a], seed + 10 + a as u64).iter().map(|r| 1.0 + 0.5 * r).collect());
    let flux =
        [0, 1, 2].map(|a| random_vector(counts[a], seed + 20 + a as u64).iter().map(|r| 0.5 * r).collect());
    let sink = random_vector(n, seed + 30).iter().map(|r| 0.15 + 0.1 * r).collect();
    FaceCoupledOperator { shape, periodic, conductance, flux, sink, active: vec![true; n] }
}

/// A sphere (centre, radius) in the unit box.
pub type Hole = ([f64; 3], f64);

/// `count` non-overlapping holes of radius `radius`, at least `radius` from the box faces (seeded).
pub fn random_holes(count: usize, radius: f64, seed: u64) -> Vec<Hole> {
    let mut holes: Vec<Hole> = Vec::new();
    let mut r = random_vector(3 * 200 * count.max(1), seed).into_iter();
    while holes.len() < count {
        let (Some(a), Some(b), Some(c)) = (r.next(), r.next(), r.next()) else { break };
        let centre = [a, b, c].map(|u| 2.0 * radius + (1.0 - 4.0 * radius) * 0.5 * (u + 1.0));
        let clear = holes.iter().all(|(o, _)| {
            let d2: f64 = (0..3).map(|k| (o[k] - centre[k]).powi(2)).sum();
            d2 > (2.2 * radius).powi(2)
        });
        if clear {
            holes.push((centre, radius));
        }
    }
    holes
}

/// Diffusion (D = 1) on the unit box of n³ cells with `holes` cut out (no-flux), `c = 0` on all six box faces
/// (sink 2G for each boundary face), plus the flux of a potential flow along x scaled to a largest cell Péclet
/// number `peclet` (`|F|/G` on interior faces), with its outflow through x = 1 on the diagonal.
pub fn box_with_holes(n: usize, holes: &[Hole], peclet: f64) -> FaceCoupledOperator {
    let shape = [n, n, n];
    let h = 1.0 / n as f64;
    let g = h; // D · h² / h
    let centre = |i: usize| (i as f64 + 0.5) * h;
    let mut active = vec![true; n * n * n];
    for k in 0..n {
        for j in 0..n {
            for i in 0..n {
                let x = [centre(i), centre(j), centre(k)];
                if holes.iter().any(|(o, r)| (0..3).map(|a| (x[a] - o[a]).powi(2)).sum::<f64>() < r * r) {
                    active[i + n * (j + n * k)] = false;
                }
            }
        }
    }
    let counts = face_counts(shape);
    let mut conductance = counts.map(|c| vec![0.0; c]);
    let mut sink = vec![0.0; n * n * n];
    for k in 0..n {
        for j in 0..n {
            for i in 0..n {
                let p = i + n * (j + n * k);
                if !active[p] {
                    continue;
                }
                let ijk = [i, j, k];
                for a in 0..3 {
                    let stride = [1, n, n * n][a];
                    if ijk[a] > 0 && active[p - stride] {
                        conductance[a][face_index(shape, a, i, j, k)] = g;
                    }
                    if ijk[a] == 0 || ijk[a] == n - 1 {
                        sink[p] += 2.0 * g;
                    }
                }
            }
        }
    }
    let mut op = FaceCoupledOperator {
        shape,
        periodic: [false; 3],
        conductance,
        flux: counts.map(|c| vec![0.0; c]),
        sink,
        active,
    };
    if peclet > 0.0 {
        let (flux, outflow) = potential_flow(&op);
        let largest = flux.iter().flatten().fold(0.0f64, |m, f| m.max(f.abs()));
        let scale = peclet * g / largest;
        op.flux = flux.map(|v| v.into_iter().map(|f| f * scale).collect());
        for (s, o) in op.sink.iter_mut().zip(outflow) {
            *s += o * scale;
        }
    }
    op
}

/// Potential flow through the box of `op` (same holes): unit mobility per face, potential 1 at x = 0 and 0 at
/// x = 1, walls elsewhere. Returns interior face fluxes and the outflow through x = 1 per grid cell.
fn potential_flow(op: &FaceCoupledOperator) -> ([Vec<f64>; 3], Vec<f64>) {
    let shape = op.shape;
    let n = shape[0];
    let mut flow = op.clone();
    flow.sink.iter_mut().for_each(|s| *s = 0.0);
    let g = 1.0;
    let mut rhs = vec![0.0; flow.sink.len()];
    for k in 0..n {
        for j in 0..n {
            for (i, potential) in [(0, 1.0), (n - 1, 0.0)] {
                let p = i + n * (j + n * k);
                if flow.active[p] {
                    flow.sink[p] += 2.0 * g;
                    rhs[p] += 2.0 * g * potential;
                }
            }
        }
    }
    for a in 0..3 {
        flow.conductance[a].iter_mut().for_each(|c| *c = if *c > 0.0 { g } else { 0.0 });
    }
    let solver = SteadySolver::new(
        LinearSystem { operator: flow.clone(), scheme: AdvectionScheme::Central, correction: None },
        MultigridParams::default(),
    );
    let mut phi = vec![0.0; rhs.len()];
    let params = KrylovParams { relative_tolerance: 1e-11, max_iterations: 200 };
    if let Err(e) = solver.solve(&rhs, &mut phi, &params) {
        panic!("potential flow of the test box did not converge: {e}");
    }
    let mut flux = face_counts(shape).map(|c| vec![0.0; c]);
    for a in 0..3 {
        let stride = [1, n, n * n][a];
        for k in 0..n {
            for j in 0..n {
                for i in 0..n {
                    if [i, j, k][a] == 0 {
                        continue;
                    }
                    let p = i + n * (j + n * k);
                    let f = face_index(shape, a, i, j, k);
                    flux[a][f] = flow.conductance[a][f] * (phi[p - stride] - phi[p]);
                }
            }
        }
    }
    let mut outflow = vec![0.0; rhs.len()];
    for k in 0..n {
        for j in 0..n {
            let p = n - 1 + n * (j + n * k);
            if flow.active[p] {
                outflow[p] = 2.0 * g * phi[p];
            }
        }
    }
    (flux, outflow)
}
