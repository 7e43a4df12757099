//! The transient keys of a case (`[solve] mode = "transient"`): times, stepping, initial condition, events and
//! the sensing window. Validated here; `validate.rs` calls [`validate_transient`] when the mode is transient
//! and refuses these keys otherwise.

use std::ops::Range;
use std::path::PathBuf;

use super::raw::{RawCells, RawFlow, RawNumber, RawSensing, RawSolve};
use super::units::Dimension;
use super::validate::{Range0, Source};
use super::CaseError;

/// Where the run starts from.
#[derive(Clone, Debug, PartialEq)]
pub enum InitialCondition {
    /// No ligand anywhere (default); far-field faces follow the switched-on solution.
    Zero,
    /// `/ligand/concentration` of another run's `fields.h5` (same grid); far-field faces use the steady form.
    Fields(PathBuf),
}

/// Transient parameters in SI units.
#[derive(Clone, Debug, PartialEq)]
pub struct TransientSolve {
    pub end_time: f64,
    /// Fixed step, or the first step when adaptive (s).
    pub time_step: f64,
    /// Output times (s), increasing, in (0, end_time]; the final state is written as well when the end time
    /// is not among them.
    pub output_times: Vec<f64>,
    /// Longest gap between output times (from 0 and to the end): the longest adaptive step.
    pub longest_output_gap: f64,
    /// `Some(tolerance)`: adaptive steps with this relative local-error tolerance.
    pub adaptive: Option<f64>,
    pub initial: InitialCondition,
    /// Stop once the field is within this relative L2 distance of the steady field (after the last event).
    pub stop_at_steady: Option<f64>,
    /// Per cell (s), in layout order.
    pub secretion_start: Vec<f64>,
    /// `(time, mean velocity after)` of a flow step change.
    pub flow_change: Option<(f64, f64)>,
    /// Cumulative sensing counts start here (s).
    pub window_start: f64,
}

/// Relative L2 distance to the steady field at which `stop_at_steady = true` stops a run.
pub const STEADY_DISTANCE: f64 = 1e-4;
/// Default local-error tolerance of adaptive stepping.
pub const DEFAULT_ERROR_TOLERANCE: f64 = 1e-3;
/// Most output times a run may write.
const MAX_OUTPUTS: f64 = 10_000.0;

/// The keys that only a transient run uses, with their spans (for the steady-mode refusal).
pub(super) fn transient_only_keys<'a>(
    solve: &'a RawSolve,
    sensing: &'a RawSensing,
    cells: &'a RawCells,
    flow: &'a RawFlow,
) -> Vec<(String, Range<usize>)> {
    let mut keys = Vec::new();
    let mut add = |key: &str, span: Option<Range<usize>>| {
        if let Some(s) = span {
            keys.push((key.to_string(), s));
        }
    };
    add("solve.end_time", solve.end_time.as_ref().map(|v| v.span()));
    add("solve.time_step", solve.time_step.as_ref().map(|v| v.span()));
    add("solve.output_every", solve.output_every.as_ref().map(|v| v.span()));
    add("solve.output_times", solve.output_times.as_ref().map(|v| v.span()));
    add("solve.adaptive", solve.adaptive.as_ref().map(|v| v.span()));
    add("solve.error_tolerance", solve.error_tolerance.as_ref().map(|v| v.span()));
    add("solve.initial_condition", solve.initial_condition.as_ref().map(|v| v.span()));
    add("solve.stop_at_steady", solve.stop_at_steady.as_ref().map(|v| v.span()));
    add("sensing.window_start", sensing.window_start.as_ref().map(|v| v.span()));
    add("cells.secretion_start", cells.secretion_start.as_ref().map(|v| v.span()));
    add("flow.change_at", flow.change_at.as_ref().map(|v| v.span()));
    add("flow.mean_velocity_after", flow.mean_velocity_after.as_ref().map(|v| v.span()));
    if let Some(list) = &cells.list {
        for (i, entry) in list.get_ref().iter().enumerate() {
            add(
                &format!("cells.list[{i}].secretion_start"),
                entry.get_ref().secretion_start.as_ref().map(|v| v.span()),
            );
        }
    }
    keys
}

/// Validates the transient keys; `cells` is the number of cells of the layout (ids `0..cells`).
#[allow(clippy::too_many_arguments)]
pub(super) fn validate_transient(
    src: &Source,
    solve: &RawSolve,
    solve_span: Option<&Range<usize>>,
    sensing: &RawSensing,
    raw_cells: &RawCells,
    flow: &RawFlow,
    cells: usize,
    case_dir: &std::path::Path,
) -> Result<TransientSolve, CaseError> {
    let end_time = src.required(
        "solve.end_time",
        solve.end_time.as_ref(),
        solve_span,
        Dimension::TIME,
        Range0::Positive,
        "\"6 h\"",
    )?;
    let time_step = src.required(
        "solve.time_step",
        solve.time_step.as_ref(),
        solve_span,
        Dimension::TIME,
        Range0::Positive,
        "\"60 s\" (the first step when adaptive)",
    )?;
    let span_of = |v: &Option<toml::Spanned<_>>| v.as_ref().map(|s: &toml::Spanned<_>| s.span());
    if time_step > end_time {
        return Err(src.error(
            "solve.time_step",
            span_of(&solve.time_step).as_ref(),
            format!("solve.time_step ({time_step} s) is longer than solve.end_time ({end_time} s)"),
        ));
    }
    let output_times = match (&solve.output_every, &solve.output_times) {
        (Some(_), Some(times)) => {
            return Err(src.error(
                "solve.output_times",
                Some(&times.span()),
                "give either solve.output_times or solve.output_every, not both",
            ))
        }
        (_, Some(times)) => listed_output_times(src, times, end_time)?,
        (every, None) => {
            let output_every = src.quantity_or(
                "solve.output_every",
                every.as_ref(),
                Dimension::TIME,
                Range0::Positive,
                end_time,
            )?;
            if end_time / output_every > MAX_OUTPUTS {
                return Err(src.error(
                    "solve.output_every",
                    span_of(&solve.output_every).as_ref(),
                    format!(
                        "solve.output_every would write {:.0} output times; at most {MAX_OUTPUTS:.0}",
                        end_time / output_every
                    ),
                ));
            }
            // Fixed steps must land on the output times.
            let ratio = output_every / time_step;
            let fixed = !solve.adaptive.as_ref().is_some_and(|a| *a.get_ref());
            if fixed && (ratio - ratio.round()).abs() > 1e-9 * ratio.max(1.0) {
                return Err(src.error(
                    "solve.output_every",
                    span_of(&solve.output_every).as_ref(),
                    format!(
                        "solve.output_every ({output_every} s) must be a whole multiple of solve.time_step ({time_step} s) when the steps are fixed"
                    ),
                ));
            }
            every_output_time(output_every, end_time)
        }
    };
    let longest_output_gap = std::iter::once(0.0)
        .chain(output_times.iter().copied())
        .chain(std::iter::once(end_time))
        .collect::<Vec<f64>>()
        .windows(2)
        .map(|w| w[1] - w[0])
        .fold(0.0, f64::max);
    let adaptive = solve.adaptive.as_ref().is_some_and(|a| *a.get_ref());
    let adaptive = if adaptive {
        let tol = src.quantity_or(
            "solve.error_tolerance",
            solve.error_tolerance.as_ref(),
            Dimension::DIMENSIONLESS,
            Range0::Positive,
            DEFAULT_ERROR_TOLERANCE,
        )?;
        if tol >= 1.0 {
            return Err(src.error(
                "solve.error_tolerance",
                span_of(&solve.error_tolerance).as_ref(),
                format!("solve.error_tolerance = {tol} must be below 1 (a relative local error)"),
            ));
        }
        Some(tol)
    } else {
        if let Some(v) = &solve.error_tolerance {
            return Err(src.error(
                "solve.error_tolerance",
                Some(&v.span()),
                "solve.error_tolerance is only used with solve.adaptive = true",
            ));
        }
        None
    };
    let initial = match &solve.initial_condition {
        None => InitialCondition::Zero,
        Some(v) => match v.get_ref().as_str() {
            "zero" => InitialCondition::Zero,
            path if path.ends_with(".h5") => InitialCondition::Fields(case_dir.join(path)),
            other => {
                return Err(src.error(
                    "solve.initial_condition",
                    Some(&v.span()),
                    format!(
                    "solve.initial_condition = \"{other}\" is neither \"zero\" nor the path of a fields.h5"
                ),
                ))
            }
        },
    };
    let stop_at_steady =
        solve.stop_at_steady.as_ref().is_some_and(|v| *v.get_ref()).then_some(STEADY_DISTANCE);

    let window_start = src.quantity_or(
        "sensing.window_start",
        sensing.window_start.as_ref(),
        Dimension::TIME,
        Range0::NonNegative,
        0.0,
    )?;
    let default_start = src.quantity_or(
        "cells.secretion_start",
        raw_cells.secretion_start.as_ref(),
        Dimension::TIME,
        Range0::NonNegative,
        0.0,
    )?;
    let mut secretion_start = vec![default_start; cells];
    if let Some(list) = &raw_cells.list {
        for (i, entry) in list.get_ref().iter().enumerate() {
            let key = format!("cells.list[{i}].secretion_start");
            if let (Some(v), Some(slot)) = (&entry.get_ref().secretion_start, secretion_start.get_mut(i)) {
                *slot = src.quantity(&key, v, Dimension::TIME, Range0::NonNegative)?;
            }
        }
    }
    let flow_change = match (&flow.change_at, &flow.mean_velocity_after) {
        (None, None) => None,
        (Some(at), Some(after)) => {
            let t = src.quantity("flow.change_at", at, Dimension::TIME, Range0::Positive)?;
            let u =
                src.quantity("flow.mean_velocity_after", after, Dimension::VELOCITY, Range0::NonNegative)?;
            Some((t, u))
        }
        (Some(v), None) => {
            return Err(src.error(
                "flow.change_at",
                Some(&v.span()),
                "flow.change_at needs flow.mean_velocity_after",
            ))
        }
        (None, Some(v)) => {
            return Err(src.error(
                "flow.mean_velocity_after",
                Some(&v.span()),
                "flow.mean_velocity_after needs flow.change_at",
            ))
        }
    };
    Ok(TransientSolve {
        end_time,
        time_step,
        output_times,
        longest_output_gap,
        adaptive,
        initial,
        stop_at_steady,
        secretion_start,
        flow_change,
        window_start,
    })
}

/// Output times `k · output_every` (k ≥ 1) up to the end time.
fn every_output_time(output_every: f64, end_time: f64) -> Vec<f64> {
    let mut times = Vec::new();
    let mut k = 1u64;
    loop {
        let time = k as f64 * output_every;
        if time > end_time * (1.0 + 1e-12) {
            break;
        }
        times.push(time.min(end_time));
        k += 1;
    }
    times
}

/// `solve.output_times`: a list of times, or `{ from, to, count, scale = "linear" | "log" }` (count times from
/// `from` to `to`, both included, equally spaced in time or in log time).
fn listed_output_times(
    src: &Source,
    value: &toml::Spanned<toml::Value>,
    end_time: f64,
) -> Result<Vec<f64>, CaseError> {
    let key = "solve.output_times";
    let span = value.span();
    let fail = |message: String| src.error(key, Some(&span), message);
    let time_of = |name: &str, v: &toml::Value| -> Result<f64, CaseError> {
        let raw = match v {
            toml::Value::Integer(i) => RawNumber::Si(*i as f64),
            toml::Value::Float(f) => RawNumber::Si(*f),
            toml::Value::String(text) => RawNumber::Text(text.clone()),
            other => {
                return Err(src.error(
                    name,
                    Some(&span),
                    format!(
                        "{name} = {other} is not a time (a number of seconds or a string such as \"10 min\")"
                    ),
                ))
            }
        };
        src.quantity(name, &toml::Spanned::new(span.clone(), raw), Dimension::TIME, Range0::Positive)
    };
    let times = match value.get_ref() {
        toml::Value::Array(list) => {
            if list.len() as f64 > MAX_OUTPUTS {
                return Err(fail(format!("{key} lists {} times; at most {MAX_OUTPUTS:.0}", list.len())));
            }
            let times = list.iter().map(|v| time_of(key, v)).collect::<Result<Vec<f64>, _>>()?;
            if times.is_empty() {
                return Err(fail(format!("{key} is an empty list; list at least one time")));
            }
            if let Some(w) = times.windows(2).find(|w| w[1] <= w[0]) {
                return Err(fail(format!("{key} must increase: {} s is followed by {} s", w[0], w[1])));
            }
            times
        }
        toml::Value::Table(table) => {
            if let Some(unknown) =
                table.keys().find(|k| !["from", "to", "count", "scale"].contains(&k.as_str()))
            {
                return Err(fail(format!("{key} has no key \"{unknown}\" (from, to, count, scale)")));
            }
            let get = |name: &str| {
                table
                    .get(name)
                    .ok_or_else(|| fail(format!("{key}.{name} is missing (from, to and count are needed)")))
            };
            let from = time_of(&format!("{key}.from"), get("from")?)?;
            let to = time_of(&format!("{key}.to"), get("to")?)?;
            let count = match get("count")? {
                toml::Value::Integer(n) if *n >= 2 && (*n as f64) <= MAX_OUTPUTS => *n as usize,
                other => {
                    return Err(fail(format!(
                        "{key}.count = {other} must be a whole number from 2 to {MAX_OUTPUTS:.0}"
                    )))
                }
            };
            let log = match table.get("scale") {
                None => false,
                Some(toml::Value::String(s)) if s == "linear" => false,
                Some(toml::Value::String(s)) if s == "log" => true,
                Some(other) => {
                    return Err(fail(format!("{key}.scale = {other} is not \"linear\" or \"log\"")))
                }
            };
            if to <= from {
                return Err(fail(format!("{key}.to ({to} s) must be later than {key}.from ({from} s)")));
            }
            let at = |k: usize| {
                let s = k as f64 / (count - 1) as f64;
                if log {
                    (from.ln() + s * (to.ln() - from.ln())).exp()
                } else {
                    from + s * (to - from)
                }
            };
            // The ends exactly as written.
            (0..count)
                .map(|k| {
                    if k == 0 {
                        from
                    } else if k + 1 == count {
                        to
                    } else {
                        at(k)
                    }
                })
                .collect()
        }
        other => {
            return Err(fail(format!(
                "{key} = {other} is neither a list of times nor {{ from, to, count, scale = \"log\" }}"
            )))
        }
    };
    if let Some(&late) = times.iter().find(|&&t| t > end_time * (1.0 + 1e-12)) {
        return Err(fail(format!("{key}: {late} s is after solve.end_time ({end_time} s)")));
    }
    Ok(times)
}
