//! Where a seed-averaged metric crosses a level along one parameter: the decision logic of the crossing
//! finder, free of files and runs. Given every observation so far, [`next_step`] says which parameter values
//! to run next (each for every seed) or that the search is over, and with what result. It keeps no state of
//! its own, so a search that is interrupted and restarted from the same observations makes the same choices.
//!
//! The metric is handled in g = ln m when every value and the level are positive (sensing metrics go as
//! powers of the parameters), else in m; the parameter in u = ln x on a log axis, else in x.
//!
//! - **Seed spread.** The variance of g across seeds is pooled over the parameter values of the bracket
//!   (common practice for replicates of equal spread: Σ(nᵢ − 1)sᵢ²/Σ(nᵢ − 1)), so that its Student-t factor
//!   has the degrees of freedom of all of them — two seeds at five values give t₀.₉₇₅(5) = 2.57 instead of
//!   t₀.₉₇₅(1) = 12.7 at each. A value lies *above* the level when its mean is above by more than the
//!   half-width h = t·s/√n of the 95 % interval, *below* likewise, and is undecided otherwise.
//! - **Bracket and estimate.** The crossing is bracketed by the nearest decided values on either side of the
//!   first change of sign of mean − level (walking from `from`); it is estimated by the least-squares line of
//!   g against u over the bracket's values (the secant of its two ends when it holds no more), and `found`
//!   when the bracket is no wider than ±`relative_precision` of it.
//! - **Seed limit.** Near the crossing a value is undecided within w = h/|dg/du| of it, so no bracket can be
//!   narrower than about ±w. When w exceeds the target half-width δ the seeds, not the parameter values,
//!   limit the precision: the search places values at ±1.5w around the estimate while that still narrows the
//!   bracket, then ends `seed_limited`, with the seeds n that would bring t·s/√n within |dg/du|·δ.
//! - **Steps.** Otherwise two values at ±δ around the estimate (one round settles the crossing when the
//!   estimate is good); when those are taken, the middle of the widest gap of the bracket that has a decided
//!   end — gaps between undecided values are never split, they hold the seed-limited band.

use super::student_t::{t_975, ReplicateSummary};

/// A crossing search: the metric's `level`, the searched range (SI) and whether it runs in log space, the
/// precision asked, and the budget.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct SearchParams {
    pub level: f64,
    pub from: f64,
    pub to: f64,
    pub log: bool,
    pub relative_precision: f64,
    /// Cases (parameter values × seeds) the search may run.
    pub max_cases: usize,
    pub seeds: usize,
}

/// The metric of every finished case at one parameter value (one per seed; NaN for a failed case).
#[derive(Clone, Debug, PartialEq)]
pub struct Observation {
    pub x: f64,
    pub values: Vec<f64>,
}

#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Status {
    Found,
    SeedLimited { seeds_needed: usize },
    NotBracketed,
    BudgetSpent,
}

impl Status {
    pub fn name(&self) -> &'static str {
        match self {
            Status::Found => "found",
            Status::SeedLimited { .. } => "seed_limited",
            Status::NotBracketed => "not_bracketed",
            Status::BudgetSpent => "budget_spent",
        }
    }
}

/// The result of a search (NaN crossing when not bracketed).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Crossing {
    pub crossing: f64,
    pub low: f64,
    pub high: f64,
    pub cases: usize,
    pub status: Status,
}

#[derive(Clone, Debug, PartialEq)]
pub enum Step {
    /// Run these parameter values, each for every seed.
    Run(Vec<f64>),
    Done(Crossing),
}

/// The band the seeds asked for must leave, as a fraction of the target half-width: the estimate of the
/// crossing is not exact.
const SEEDS_MARGIN: f64 = 1.2;

/// Degrees of freedom the pooled spread gathers at least (where there are enough values): t₀.₉₇₅(4) = 2.78.
const MIN_POOLED_DOF: usize = 4;

/// Seeds asked for at most in `seeds_needed`.
const MAX_SEEDS_NEEDED: usize = 1_000_000;

/// One parameter value's seed statistics, in search coordinates.
struct Point {
    u: f64,
    /// g of the seed mean of the metric.
    g: f64,
    /// Σ(gᵢ − ḡ)² over the seeds' g values, and how many there are.
    squares: f64,
    n: usize,
}

impl Point {
    fn of(o: &Observation, p: &SearchParams, g: &dyn Fn(f64) -> f64) -> Point {
        let s = ReplicateSummary::of(&o.values);
        let gs: Vec<f64> = o.values.iter().filter(|v| v.is_finite()).map(|&v| g(v)).collect();
        let g_mean = gs.iter().sum::<f64>() / gs.len().max(1) as f64;
        Point {
            u: to_u(o.x, p),
            g: g(s.mean),
            squares: gs.iter().map(|v| (v - g_mean).powi(2)).sum(),
            n: gs.len(),
        }
    }

    /// +1 above the level, −1 below, 0 undecided.
    fn side(&self, level: f64, spread: &Spread) -> i32 {
        let h = spread.half_width(self.n);
        if self.g - h > level {
            1
        } else if self.g + h < level {
            -1
        } else {
            0
        }
    }

    fn mean_side(&self, level: f64) -> i32 {
        if self.g > level {
            1
        } else {
            -1
        }
    }
}

/// The seed spread of g pooled over some parameter values: its standard deviation and degrees of freedom.
struct Spread {
    sd: f64,
    dof: usize,
    /// Parameter values pooled.
    values: usize,
}

impl Spread {
    /// Pooled over `points`, leaving out values whose seeds all agree (a saturated metric, e.g. no cell
    /// failed, says nothing of the spread near the crossing).
    fn pooled<'a>(points: impl Iterator<Item = &'a Point>) -> Spread {
        let spread: Vec<&Point> = points.filter(|pt| pt.squares > 0.0).collect();
        let dof: usize = spread.iter().map(|pt| pt.n - 1).sum();
        let squares: f64 = spread.iter().map(|pt| pt.squares).sum();
        Spread { sd: if dof > 0 { (squares / dof as f64).sqrt() } else { 0.0 }, dof, values: spread.len() }
    }

    /// Half-width of the 95 % interval of a mean over `n` seeds (0 without a spread).
    fn half_width(&self, n: usize) -> f64 {
        if self.dof == 0 || n == 0 {
            0.0
        } else {
            t_975(self.dof) * self.sd / (n as f64).sqrt()
        }
    }
}

fn to_u(x: f64, p: &SearchParams) -> f64 {
    if p.log {
        x.ln()
    } else {
        x
    }
}

fn to_x(u: f64, p: &SearchParams) -> f64 {
    if p.log {
        u.exp()
    } else {
        u
    }
}

/// The nearest decided values on either side of the change of sign between `k − 1` and `k`: `(lo, hi)`
/// (an end of the range when none is decided).
fn bracket(points: &[Point], k: usize, start: i32, level: f64, spread: &Spread) -> (usize, usize) {
    let lo = (0..k).rev().find(|&i| points[i].side(level, spread) == start).unwrap_or(0);
    let hi = (k..points.len()).find(|&i| points[i].side(level, spread) == -start).unwrap_or(points.len() - 1);
    (lo, hi)
}

/// Least-squares line of g against u through `points`: `(slope, u where it meets level)`.
fn fit(points: &[Point], level: f64) -> (f64, f64) {
    let n = points.len() as f64;
    let (mu, mg) =
        (points.iter().map(|pt| pt.u).sum::<f64>() / n, points.iter().map(|pt| pt.g).sum::<f64>() / n);
    let suu: f64 = points.iter().map(|pt| (pt.u - mu).powi(2)).sum();
    let sug: f64 = points.iter().map(|pt| (pt.u - mu) * (pt.g - mg)).sum();
    let slope = sug / suu;
    (slope, mu + (level - mg) / slope)
}

/// The next step of the search given every observation so far.
pub fn next_step(p: &SearchParams, observations: &[Observation]) -> Step {
    let cases: usize = observations.iter().map(|o| o.values.len()).sum();
    let seen = |x: f64| observations.iter().any(|o| o.x == x);
    let missing_ends: Vec<f64> = [p.from, p.to].into_iter().filter(|&x| !seen(x)).collect();
    if !missing_ends.is_empty() {
        return Step::Run(missing_ends);
    }
    let done = |crossing: f64, low: f64, high: f64, status: Status| {
        Step::Done(Crossing { crossing, low, high, cases, status })
    };
    let log_metric = p.level > 0.0
        && observations.iter().flat_map(|o| &o.values).filter(|v| v.is_finite()).all(|&v| v > 0.0);
    let g = |m: f64| if log_metric { m.ln() } else { m };
    let level = g(p.level);
    let mut points: Vec<Point> =
        observations.iter().map(|o| Point::of(o, p, &g)).filter(|pt| pt.n > 0 && pt.g.is_finite()).collect();
    points.sort_by(|a, b| a.u.total_cmp(&b.u));
    let Some(first) = points.first() else {
        return done(f64::NAN, p.from, p.to, Status::NotBracketed);
    };
    let start = first.mean_side(level);
    let Some(k) = points.iter().position(|pt| pt.mean_side(level) != start) else {
        return done(f64::NAN, p.from, p.to, Status::NotBracketed);
    };
    // The spread is pooled over the values nearest the change of sign (it changes along the axis: more cells,
    // steadier medians), as many as give MIN_POOLED_DOF degrees of freedom.
    let middle = 0.5 * (points[k - 1].u + points[k].u);
    let mut nearest: Vec<&Point> = points.iter().filter(|pt| pt.squares > 0.0).collect();
    nearest.sort_by(|a, b| (a.u - middle).abs().total_cmp(&(b.u - middle).abs()));
    let mut dof = 0;
    let count = nearest.iter().take_while(|pt| {
        let more = dof < MIN_POOLED_DOF;
        dof += pt.n - 1;
        more
    });
    let spread = Spread::pooled(count.copied());
    let (lo, hi) = bracket(&points, k, start, level, &spread);
    let (u_lo, u_hi) = (points[lo].u, points[hi].u);
    let inside = &points[lo..=hi];
    let (pair_slope, u_secant) = fit(&points[k - 1..=k], level);
    let (slope, u_fit) = if inside.len() > 2 { fit(inside, level) } else { (pair_slope, u_secant) };
    let u_star = if u_fit.is_finite() && u_fit >= u_lo && u_fit <= u_hi && slope * pair_slope > 0.0 {
        u_fit
    } else {
        u_secant
    };
    let x_star = to_x(u_star, p);
    let (x_lo, x_hi) = (to_x(u_lo, p), to_x(u_hi, p));
    let (low, high) = (x_lo.min(x_hi), x_lo.max(x_hi));
    if high - low <= 2.0 * p.relative_precision * x_star.abs() {
        return done(x_star, low, high, Status::Found);
    }
    // The target half-width in search coordinates (a little inside it).
    let delta = if p.log {
        (1.0 + 0.9 * p.relative_precision).ln()
    } else {
        0.9 * p.relative_precision * x_star.abs()
    };
    // The slope across the bracket (its ends are decided: the least noisy estimate) sets the undecided band.
    let ends_slope = if hi > lo { (points[hi].g - points[lo].g) / (u_hi - u_lo) } else { pair_slope };
    let slope = if ends_slope.is_finite() && ends_slope != 0.0 { ends_slope.abs() } else { 0.0 };
    let band = spread.half_width(p.seeds) / slope;
    let seed_limited = || {
        let wanted = slope * delta / SEEDS_MARGIN;
        let mut n = if spread.sd > 0.0 && wanted > 0.0 {
            ((1.96 * spread.sd / wanted).powi(2).ceil().min(MAX_SEEDS_NEEDED as f64) as usize)
                .max(p.seeds + 1)
        } else {
            p.seeds + 1
        };
        let enough = |n: usize| {
            spread.sd == 0.0
                || t_975(spread.values.max(1) * (n - 1)) * spread.sd / (n as f64).sqrt() <= wanted
        };
        while n < MAX_SEEDS_NEEDED && !enough(n) {
            n += 1;
        }
        done(x_star, low, high, Status::SeedLimited { seeds_needed: n })
    };
    // Values at ±d around the estimate: at the target when the band is narrower, else just outside the band.
    let d = if band <= delta { delta } else { 1.5 * band };
    let near = |u: f64, within: f64| points.iter().any(|pt| (pt.u - u).abs() < 0.5 * within);
    let (u_min, u_max) = (u_lo.min(u_hi), u_lo.max(u_hi));
    // On each side: past any undecided values there (a value in the band says the band reaches it).
    let outward = |sign: f64| {
        let mut u = u_star + sign * d;
        for _ in 0..points.len() {
            match points.iter().find(|pt| (pt.u - u).abs() < 0.5 * d) {
                Some(pt) if pt.side(level, &spread) == 0 => u = pt.u + sign * d,
                Some(_) => return None,
                None => break,
            }
        }
        Some(u).filter(|&u| u > u_min && u < u_max && !near(u, d))
    };
    let mut next: Vec<f64> = [-1.0, 1.0].into_iter().filter_map(outward).collect();
    // Regula falsi creeps from one side when the metric is curved: while the estimate sits far nearer one end
    // of the bracket, the middle between it and the far end is run too (the far end then moves at least halfway).
    let (near_end, far_end) = if u_star - u_min < u_max - u_star { (u_min, u_max) } else { (u_max, u_min) };
    let far = (far_end - u_star).abs();
    if far > 4.0 * d && far > 3.0 * (u_star - near_end).abs() {
        let middle = 0.5 * (u_star + far_end);
        if !near(middle, d) {
            next.push(middle);
        }
    }
    if next.is_empty() {
        if band > delta {
            return seed_limited();
        }
        // The middle of the widest gap with a decided end; a gap between undecided values is the band itself.
        let widest = inside
            .windows(2)
            .filter(|w| w[0].side(level, &spread) != 0 || w[1].side(level, &spread) != 0)
            .map(|w| (w[1].u - w[0].u, 0.5 * (w[0].u + w[1].u)))
            .max_by(|a, b| a.0.total_cmp(&b.0));
        match widest {
            Some((gap, middle)) if gap > 2.0 * delta && !near(middle, delta) => next.push(middle),
            _ => return seed_limited(),
        }
    }
    let room = p.max_cases.saturating_sub(cases) / p.seeds.max(1);
    if room == 0 {
        return done(x_star, low, high, Status::BudgetSpent);
    }
    next.truncate(room);
    Step::Run(next.into_iter().map(|u| to_x(u, p)).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Direction error ∝ 1/U around a crossing of 1 at `x_c`, with a seeded ±`noise` relative spread.
    fn metric(x: f64, seed: usize, x_c: f64, noise: f64) -> f64 {
        let wobble = [0.0, 1.0, -1.0, 0.5, -0.5, 0.8, -0.8][seed % 7];
        (x_c / x) * (1.0 + noise * wobble)
    }

    fn search(p: &SearchParams, x_c: f64, noise: f64) -> (Crossing, usize) {
        let mut observations: Vec<Observation> = Vec::new();
        for round in 1..100 {
            match next_step(p, &observations) {
                Step::Done(c) => return (c, round),
                Step::Run(xs) => {
                    for x in xs {
                        let values = (0..p.seeds).map(|s| metric(x, s, x_c, noise)).collect();
                        observations.push(Observation { x, values });
                    }
                }
            }
        }
        panic!("no end after 100 rounds");
    }

    fn params(seeds: usize) -> SearchParams {
        SearchParams {
            level: 1.0,
            from: 0.1,
            to: 10.0,
            log: true,
            relative_precision: 0.05,
            max_cases: 200,
            seeds,
        }
    }

    #[test]
    fn finds_the_crossing_within_its_precision_with_few_cases() {
        for x_c in [0.13, 0.7, 2.2, 9.1] {
            let (c, rounds) = search(&params(1), x_c, 0.0);
            assert_eq!(c.status, Status::Found, "{x_c}: {c:?}");
            assert!(c.low <= x_c && x_c <= c.high, "{x_c} outside {c:?}");
            assert!(c.high - c.low <= 0.1 * c.crossing);
            assert!(c.cases <= 8, "{x_c}: {} cases in {rounds} rounds", c.cases);
        }
    }

    #[test]
    fn finds_a_level_crossing_of_a_failed_fraction_shaped_metric() {
        // A rising sigmoid in ln x (the share of failed cells against density), level 0.5 at x = 1.7.
        let p = SearchParams { level: 0.5, ..params(1) };
        let mut observations: Vec<Observation> = Vec::new();
        let f = |x: f64| 1.0 / (1.0 + (-(x / 1.7f64).ln() / 0.3).exp());
        let c = loop {
            match next_step(&p, &observations) {
                Step::Done(c) => break c,
                Step::Run(xs) => {
                    observations.extend(xs.into_iter().map(|x| Observation { x, values: vec![f(x)] }))
                }
            }
        };
        assert_eq!(c.status, Status::Found, "{c:?}");
        assert!(c.low <= 1.7 && 1.7 <= c.high && c.cases <= 16, "{c:?}");
    }

    #[test]
    fn beats_a_grid_of_the_same_precision_threefold_with_seeds() {
        // Two seeds 0.2 % apart: t₀.₉₇₅(1) = 12.7 makes the seed interval ±1.3 %, inside the ±5 % asked.
        // A log grid whose neighbours are 10 % apart resolves the crossing to ±5 %: ln(100)/ln(1.1) + 1 = 50
        // values, times two seeds.
        let p = params(2);
        let grid: Vec<f64> = (0..50).map(|i| 0.1 * 1.1f64.powi(i).min(100.0)).collect();
        for x_c in [0.37, 3.3] {
            let mean = |x: f64| (0..2).map(|s| metric(x, s, x_c, 0.002)).sum::<f64>() / 2.0;
            let k =
                grid.windows(2).position(|w| mean(w[0]) > 1.0 && mean(w[1]) <= 1.0).expect("grid brackets");
            let (a, b) = (grid[k].ln(), grid[k + 1].ln());
            let (ma, mb) = (mean(grid[k]), mean(grid[k + 1]));
            let from_grid = (a + (1.0 - ma) * (b - a) / (mb - ma)).exp();
            let (c, _) = search(&p, x_c, 0.002);
            assert_eq!(c.status, Status::Found, "{c:?}");
            assert!(c.low <= from_grid && from_grid <= c.high, "grid crossing {from_grid} outside {c:?}");
            assert!(3 * c.cases <= 2 * grid.len(), "finder {} cases, grid {}", c.cases, 2 * grid.len());
        }
    }

    /// `x_c/x · e^(±σ)`: seeds alternately above and below, ln spread σ (0 for the last of an odd count).
    fn spread_metric(x: f64, seed: usize, seeds: usize, x_c: f64, sigma: f64) -> f64 {
        // Sample standard deviation of ln exactly σ for every count: ±σ√((n−1)/n) for even n, ±σ and one 0
        // for odd n.
        let size = if seeds % 2 == 0 { ((seeds - 1) as f64 / seeds as f64).sqrt() } else { 1.0 };
        let sign = if seed + 1 == seeds && seeds % 2 == 1 {
            0.0
        } else if seed % 2 == 0 {
            1.0
        } else {
            -1.0
        };
        (x_c / x) * (sign * size * sigma).exp()
    }

    fn search_spread(p: &SearchParams, x_c: f64, sigma: f64) -> Crossing {
        let mut observations: Vec<Observation> = Vec::new();
        loop {
            match next_step(p, &observations) {
                Step::Done(c) => return c,
                Step::Run(xs) => observations.extend(xs.into_iter().map(|x| Observation {
                    x,
                    values: (0..p.seeds).map(|s| spread_metric(x, s, p.seeds, x_c, sigma)).collect(),
                })),
            }
        }
    }

    #[test]
    fn seed_limited_early_with_the_seeds_that_would_do() {
        // Two seeds 2σ = 14 % apart: no pair of values can be told apart from the level within ±5 %.
        let c = search_spread(&params(2), 0.37, 0.07);
        let Status::SeedLimited { seeds_needed } = c.status else { panic!("{c:?}") };
        assert!(c.low <= 0.37 && 0.37 <= c.high, "{c:?}");
        // Ends, two rounds around the estimate (just outside the undecided band, which narrows as the pooled
        // spread gains degrees of freedom), then no more values: gaps of undecided values are not split.
        assert!(c.cases <= 12, "{c:?}");
        // The seeds asked for do find it; half as many do not.
        let even = seeds_needed + seeds_needed % 2;
        let c = search_spread(&SearchParams { max_cases: 100 * even, ..params(even) }, 0.37, 0.07);
        assert_eq!(c.status, Status::Found, "{seeds_needed} seeds: {c:?}");
        let half = (seeds_needed / 2).max(3);
        let c = search_spread(&SearchParams { max_cases: 100 * half, ..params(half) }, 0.37, 0.07);
        assert!(matches!(c.status, Status::SeedLimited { .. }), "{half} seeds: {c:?}");
    }

    #[test]
    fn a_noisy_curved_metric_keeps_the_grid_crossing_inside_with_fewer_cases_than_a_grid_of_its_precision() {
        // Failed-fraction shape (a sigmoid in ln x) with seeds ±3 % apart: whatever the status, the crossing
        // of the seed mean on a dense grid lies inside the interval, and a grid spaced by the interval's
        // relative width over the same range costs at least 2.5× the cases (the secant in ln of a sigmoid
        // creeps from one side for a few rounds).
        let truth = |x: f64| 1.0 / (1.0 + (-(x / 1.7f64).ln() / 0.4).exp());
        let p = SearchParams { level: 0.5, max_cases: 60, ..params(2) };
        let mut observations: Vec<Observation> = Vec::new();
        let mean = |x: f64| truth(x);
        let c = loop {
            match next_step(&p, &observations) {
                Step::Done(c) => break c,
                Step::Run(xs) => observations.extend(
                    xs.into_iter().map(|x| Observation { x, values: vec![truth(x) * 1.03, truth(x) * 0.97] }),
                ),
            }
        };
        let grid: Vec<f64> = (0..=4000).map(|i| 0.1 * 100f64.powf(i as f64 / 4000.0)).collect();
        let k = grid.windows(2).position(|w| mean(w[0]) < 0.5 && mean(w[1]) >= 0.5).expect("brackets");
        assert!(c.low <= grid[k + 1] && grid[k] <= c.high, "grid crossing {} outside {c:?}", grid[k]);
        let width = (c.high - c.low) / c.crossing;
        let grid_cases = 2 * ((100f64.ln() / (1.0 + width).ln()).ceil() as usize + 1);
        assert!(5 * c.cases <= 2 * grid_cases, "finder {c:?}, grid {grid_cases}");
    }

    #[test]
    fn statuses_for_no_bracket_seed_spread_and_budget() {
        let (c, _) = search(&params(1), 50.0, 0.0);
        assert_eq!(c.status, Status::NotBracketed);
        assert!(c.crossing.is_nan());
        // Seeds spread ±60 %: the interval cannot shrink to ±5 % with three seeds.
        let (c, _) = search(&params(3), 1.0, 0.6);
        let Status::SeedLimited { seeds_needed } = c.status else { panic!("{c:?}") };
        assert!(seeds_needed > 3, "{seeds_needed}");
        assert!(c.low <= 1.0 && 1.0 <= c.high, "{c:?}");
        let (c, _) = search(&SearchParams { max_cases: 3, ..params(1) }, 1.0, 0.0);
        assert_eq!(c.status, Status::BudgetSpent, "{c:?}");
        assert_eq!(c.cases, 3);
    }
}
