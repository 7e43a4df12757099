//! The state of a transient run between two steps: everything needed to continue it bit for bit (the
//! checkpoint content), as plain numbers. [`TransientState::encode`] flattens it into one `f64` vector and
//! [`TransientState::decode`] reads it back; the binary stores that vector (the solver touches no files).

use crate::post::sensing_window::{ReadableSince, WindowCounts};

/// Fractions of the steady value whose first crossing times are recorded.
pub const FRACTIONS: [f64; 2] = [0.9, 0.99];

/// First times at which the outlet concentration and each cell's sensed rate reach 90% and 99% of their steady
/// values (linear interpolation between the accepted steps; `None` until reached).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Crossings {
    pub outlet: [Option<f64>; 2],
    pub cells: Vec<[Option<f64>; 2]>,
    last_outlet: Option<f64>,
}

impl Crossings {
    pub fn new(cells: usize) -> Self {
        Crossings { outlet: [None; 2], cells: vec![[None; 2]; cells], last_outlet: None }
    }

    /// Records crossings during the step `t0 → t1`.
    #[allow(clippy::too_many_arguments)]
    pub fn update(
        &mut self,
        t0: f64,
        t1: f64,
        before: &[f64],
        after: &[f64],
        steady: &[f64],
        outlet: Option<f64>,
        steady_outlet: Option<f64>,
    ) {
        for (i, slots) in self.cells.iter_mut().enumerate() {
            record(slots, t0, t1, before[i], after[i], steady[i]);
        }
        if let (Some(now), Some(target)) = (outlet, steady_outlet) {
            let previous = self.last_outlet.unwrap_or(0.0);
            record(&mut self.outlet, t0, t1, previous, now, target);
        }
        self.last_outlet = outlet;
    }
}

fn record(slots: &mut [Option<f64>; 2], t0: f64, t1: f64, v0: f64, v1: f64, steady: f64) {
    if steady == 0.0 {
        return;
    }
    for (slot, fraction) in slots.iter_mut().zip(FRACTIONS) {
        if slot.is_some() {
            continue;
        }
        let (a, b) = (v0 / steady, v1 / steady);
        if b >= fraction {
            let s = if (b - a).abs() > 0.0 { ((fraction - a) / (b - a)).clamp(0.0, 1.0) } else { 1.0 };
            *slot = Some(t0 + s * (t1 - t0));
        }
    }
}

/// The run between two steps.
#[derive(Clone, Debug, PartialEq)]
pub struct TransientState {
    /// Simulated time (s).
    pub time: f64,
    pub steps: usize,
    pub rejected_steps: usize,
    pub krylov_iterations: usize,
    /// cⁿ per grid cell (molecules/m³).
    pub concentration: Vec<f64>,
    /// Earlier solutions (time, field), newest first; empty after a start or an event.
    pub previous: Vec<(f64, Vec<f64>)>,
    /// Step size planned for the next step (s).
    pub next_step: f64,
    pub counts: WindowCounts,
    /// Per-cell `[bound, front, back]` rates at `time` (molecules/s).
    pub last_rates: Vec<[f64; 3]>,
    pub crossings: Crossings,
    /// Per cell: since when the window direction error has stayed readable (the time to a readable cue).
    pub readable: ReadableSince,
    /// Output times written so far.
    pub outputs_done: usize,
    /// Largest relative mass-balance error of any step so far.
    pub worst_balance_error: f64,
    pub stopped_at_steady: bool,
    /// The own fields of the cells chosen for the self/neighbour split, in the order of
    /// `TransientParams::split_cells` (empty without a split).
    pub own_fields: Vec<OwnField>,
}

/// The field of one cell's own secretion alone, integrated with the same steps and operator as the total (see
/// `own_fields`). It starts from zero: an initial field read from a file belongs to the rest.
#[derive(Clone, Debug, PartialEq)]
pub struct OwnField {
    /// Index of the cell in the layout.
    pub cell: usize,
    /// The own field at the state's time; empty once its integration failed.
    pub concentration: Vec<f64>,
    /// The own field at the time of `TransientState::previous[0]` (the BDF2 history); empty when that history is.
    pub previous: Vec<f64>,
    /// Krylov iterations of its steps so far.
    pub iterations: usize,
    /// The time of the step whose solve failed (its split is NaN from then on), and the relative residual
    /// reached (NaN for a non-finite field).
    pub failed: Option<(f64, f64)>,
}

impl OwnField {
    /// A zero own field of `cell` on a grid of `n` cells.
    pub fn zero(cell: usize, n: usize) -> Self {
        OwnField { cell, concentration: vec![0.0; n], previous: Vec::new(), iterations: 0, failed: None }
    }
}

/// Why a flattened state cannot be read back.
#[derive(thiserror::Error, Debug, PartialEq)]
#[error("the saved transient state is damaged or from another case ({0})")]
pub struct DecodeError(pub &'static str);

const MAGIC: f64 = 7_301_994.0;
const NONE: f64 = f64::NAN;

fn opt(v: Option<f64>) -> f64 {
    v.unwrap_or(NONE)
}

impl TransientState {
    /// One `f64` vector holding the whole state (counts as exact integers, `None` as NaN).
    pub fn encode(&self) -> Vec<f64> {
        let mut out = vec![MAGIC, self.time, self.steps as f64, self.rejected_steps as f64];
        out.push(self.krylov_iterations as f64);
        out.push(self.next_step);
        out.push(self.outputs_done as f64);
        out.push(self.worst_balance_error);
        out.push(if self.stopped_at_steady { 1.0 } else { 0.0 });
        let push_vec = |out: &mut Vec<f64>, v: &[f64]| {
            out.push(v.len() as f64);
            out.extend_from_slice(v);
        };
        push_vec(&mut out, &self.concentration);
        out.push(self.previous.len() as f64);
        for (t, c) in &self.previous {
            out.push(*t);
            push_vec(&mut out, c);
        }
        push_vec(&mut out, &self.counts.bound);
        push_vec(&mut out, &self.counts.front);
        push_vec(&mut out, &self.counts.back);
        let rates: Vec<f64> = self.last_rates.iter().flatten().copied().collect();
        push_vec(&mut out, &rates);
        out.extend(self.crossings.outlet.map(opt));
        out.push(opt(self.crossings.last_outlet));
        let cells: Vec<f64> = self.crossings.cells.iter().flat_map(|c| c.map(opt)).collect();
        push_vec(&mut out, &cells);
        let readable: Vec<f64> = self.readable.since.iter().map(|&t| opt(t)).collect();
        push_vec(&mut out, &readable);
        out.push(self.own_fields.len() as f64);
        for own in &self.own_fields {
            out.push(own.cell as f64);
            out.push(own.iterations as f64);
            let (at, residual) = own.failed.map_or((NONE, NONE), |(t, r)| (t, r));
            out.extend([if own.failed.is_some() { 1.0 } else { 0.0 }, at, residual]);
            push_vec(&mut out, &own.concentration);
            push_vec(&mut out, &own.previous);
        }
        out.push(MAGIC);
        out
    }

    /// Reads back what [`TransientState::encode`] wrote.
    pub fn decode(data: &[f64]) -> Result<Self, DecodeError> {
        let mut r = Reader { data, at: 0 };
        if r.next()? != MAGIC {
            return Err(DecodeError("wrong header"));
        }
        let time = r.next()?;
        let steps = r.count()?;
        let rejected_steps = r.count()?;
        let krylov_iterations = r.count()?;
        let next_step = r.next()?;
        let outputs_done = r.count()?;
        let worst_balance_error = r.next()?;
        let stopped_at_steady = r.next()? == 1.0;
        let concentration = r.vec()?;
        let mut previous = Vec::new();
        for _ in 0..r.count()? {
            let t = r.next()?;
            previous.push((t, r.vec()?));
        }
        let counts = WindowCounts { bound: r.vec()?, front: r.vec()?, back: r.vec()? };
        let flat = r.vec()?;
        let last_rates = flat.chunks_exact(3).map(|c| [c[0], c[1], c[2]]).collect();
        let o = [r.optional()?, r.optional()?];
        let last_outlet = r.optional()?;
        let flat = r.vec()?;
        let cells = flat.chunks_exact(2).map(|c| [as_opt(c[0]), as_opt(c[1])]).collect();
        let readable = ReadableSince { since: r.vec()?.into_iter().map(as_opt).collect() };
        let mut own_fields = Vec::new();
        for _ in 0..r.count()? {
            let cell = r.count()?;
            let iterations = r.count()?;
            let (failed, at, residual) = (r.next()? == 1.0, r.next()?, r.next()?);
            own_fields.push(OwnField {
                cell,
                iterations,
                failed: failed.then_some((at, residual)),
                concentration: r.vec()?,
                previous: r.vec()?,
            });
        }
        if r.next()? != MAGIC || r.at != data.len() {
            return Err(DecodeError("wrong trailer"));
        }
        Ok(TransientState {
            time,
            steps,
            rejected_steps,
            krylov_iterations,
            concentration,
            previous,
            next_step,
            counts,
            last_rates,
            crossings: Crossings { outlet: o, cells, last_outlet },
            readable,
            outputs_done,
            worst_balance_error,
            stopped_at_steady,
            own_fields,
        })
    }
}

fn as_opt(v: f64) -> Option<f64> {
    (!v.is_nan()).then_some(v)
}

struct Reader<'a> {
    data: &'a [f64],
    at: usize,
}

impl Reader<'_> {
    fn next(&mut self) -> Result<f64, DecodeError> {
        let v = *self.data.get(self.at).ok_or(DecodeError("too short"))?;
        self.at += 1;
        Ok(v)
    }
    fn count(&mut self) -> Result<usize, DecodeError> {
        let v = self.next()?;
        if v < 0.0 || v.fract() != 0.0 || v > 9.0e15 {
            return Err(DecodeError("bad count"));
        }
        Ok(v as usize)
    }
    fn optional(&mut self) -> Result<Option<f64>, DecodeError> {
        Ok(as_opt(self.next()?))
    }
    fn vec(&mut self) -> Result<Vec<f64>, DecodeError> {
        let n = self.count()?;
        let end = self.at.checked_add(n).filter(|&e| e <= self.data.len()).ok_or(DecodeError("too short"))?;
        let v = self.data[self.at..end].to_vec();
        self.at = end;
        Ok(v)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn encode_decode_round_trip() {
        let mut crossings = Crossings::new(2);
        crossings.update(0.0, 1.0, &[0.0, 0.0], &[0.95, 0.5], &[1.0, 1.0], Some(2.0), Some(2.0));
        let state = TransientState {
            time: 12.5,
            steps: 7,
            rejected_steps: 1,
            krylov_iterations: 40,
            concentration: vec![1.0, 2.0, 3.0],
            previous: vec![(10.0, vec![0.5, 1.5, 2.5]), (7.5, vec![0.1, 0.2, 0.3])],
            next_step: 2.5,
            counts: WindowCounts { bound: vec![1.0, 2.0], front: vec![3.0, 4.0], back: vec![5.0, 6.0] },
            last_rates: vec![[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]],
            crossings,
            readable: ReadableSince { since: vec![Some(4.5), None] },
            outputs_done: 3,
            worst_balance_error: 1e-10,
            stopped_at_steady: false,
            own_fields: vec![
                OwnField {
                    cell: 1,
                    concentration: vec![0.1, 0.2, 0.0],
                    previous: vec![0.05, 0.1, 0.0],
                    iterations: 9,
                    failed: None,
                },
                OwnField {
                    cell: 0,
                    concentration: Vec::new(),
                    previous: Vec::new(),
                    iterations: 3,
                    failed: Some((7.5, 2.0e-3)),
                },
            ],
        };
        let decoded = TransientState::decode(&state.encode()).unwrap();
        assert_eq!(decoded, state);
        assert!(decoded.crossings.cells[0][0].is_some() && decoded.crossings.cells[1][0].is_none());
        let mut damaged = state.encode();
        damaged.pop();
        assert!(TransientState::decode(&damaged).is_err());
    }

    /// 90% of a rise from 0 to 1 over [0, 1] is crossed at 0.9 (linear interpolation).
    #[test]
    fn crossing_time_is_interpolated() {
        let mut c = Crossings::new(1);
        c.update(0.0, 1.0, &[0.0], &[1.0], &[1.0], None, None);
        assert!((c.cells[0][0].unwrap() - 0.9).abs() < 1e-15);
        assert!((c.cells[0][1].unwrap() - 0.99).abs() < 1e-15);
    }
}
