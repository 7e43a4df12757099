//! The rounds of a crossing search (`[find]`): for every combination of the other axes, ask
//! [`next_step`](crate::sensing::crossing_search::next_step) which values of the searched axis to run (each for
//! every seed), add those cases to the plan, and once they are finished read the metric and ask again.
//!
//! Nothing of the search is stored but the finished cases: [`advance`] replays the rounds from the start,
//! reading the cases that are finished and stopping at the first round that still has unfinished ones. The
//! decisions depend only on the finished cases' metrics, so a replay asks for the same values, and the case
//! ids (derived from the values, [`Plan::push_case`]) find the same folders: an interrupted search resumes
//! without recomputing anything, locally or on Slurm.

use std::path::Path;

use anyhow::Result;

use super::axis::{AxisValue, Scale};
use super::collect::{collect_cases, ColumnData};
use super::done_marker::{case_state, CaseState};
use super::expand::{combine, Plan};
use super::find_table::{FindSpec, DEFAULT_VALUES};
use super::plan_record::PlanRecord;
use super::SweepError;
use crate::exit::InputError;
use crate::sensing::crossing_search::{next_step, Crossing, Observation, SearchParams, Step};

/// Where a search stands after [`advance`].
pub struct Progress {
    /// Every case asked for so far, round by round.
    pub plan: Plan,
    /// Rounds asked for so far (the last one may be unfinished).
    pub rounds: usize,
    /// Cases of the last round that are not finished (empty when the search is over).
    pub to_run: Vec<usize>,
}

impl Progress {
    pub fn finished(&self) -> bool {
        self.to_run.is_empty()
    }
}

/// The search parameters of `plan`'s `[find]`.
pub fn search_params(plan: &Plan, find: &FindSpec) -> SearchParams {
    let axis = &plan.sweep.axes[find.axis_index];
    let seeds = plan.axes.iter().filter(|a| a.replicate).map(|a| a.values.len()).product::<usize>().max(1);
    let end = |v: Option<&AxisValue>| v.and_then(|v| v.si).unwrap_or(f64::NAN);
    SearchParams {
        level: find.level,
        from: end(axis.values.first()),
        to: end(axis.values.last()),
        log: axis.scale == Scale::Log,
        relative_precision: find.relative_precision,
        max_cases: find.max_cases.unwrap_or(DEFAULT_VALUES * seeds),
        seeds,
    }
}

/// Replay the search of `template` (a plan of a sweep with `[find]`, no cases yet) over the cases in `dir`:
/// a case counts as finished when `finished(index, state)` says so (a finished case that is not done
/// contributes NaN). Errors: the metric is no column of the finished cases (exit code 2).
pub fn advance(template: &Plan, dir: &Path, finished: &dyn Fn(&str, &CaseState) -> bool) -> Result<Progress> {
    let find = template.sweep.find.clone().ok_or_else(|| anyhow::anyhow!("the sweep has no [find] table"))?;
    let mut plan = template.clone();
    plan.cases.clear();
    let params = search_params(&plan, &find);
    let others: Vec<usize> =
        (0..plan.axes.len()).filter(|&a| a != find.axis_index && !plan.axes[a].replicate).collect();
    let other_axes: Vec<_> = others.iter().map(|&a| plan.axes[a].clone()).collect();
    let picks = combine(&plan.sweep, &other_axes).map_err(input)?;
    let combinations: Vec<Vec<(usize, AxisValue)>> = picks
        .iter()
        .map(|p| others.iter().zip(p).map(|(&a, &k)| (a, plan.axes[a].values[k].clone())).collect())
        .collect();
    let seed_values: Vec<AxisValue> =
        plan.axes.iter().find(|a| a.replicate).map(|a| a.values.clone()).unwrap_or_default();
    let searched = plan.axes[find.axis_index].values[0].clone();
    let mut observations: Vec<Vec<Observation>> = vec![Vec::new(); combinations.len()];
    let mut results: Vec<Option<Crossing>> = vec![None; combinations.len()];
    let mut rounds = 0;
    loop {
        // (combination, x, the case of each seed)
        let mut asked: Vec<(usize, f64, Vec<usize>)> = Vec::new();
        for (c, combination) in combinations.iter().enumerate() {
            if results[c].is_some() {
                continue;
            }
            match next_step(&params, &observations[c]) {
                Step::Done(crossing) => results[c] = Some(crossing),
                Step::Run(xs) => {
                    for x in xs {
                        let value = searched.at_si(x).map_err(|message| {
                            input(SweepError::Axis {
                                path: plan.sweep.path.clone(),
                                key: find.axis.clone(),
                                message,
                            })
                        })?;
                        let x = value.si.unwrap_or(x);
                        let mut cases = Vec::new();
                        for seed in seed_values.iter().map(Some).chain([None]).take(seed_values.len().max(1))
                        {
                            let values: Vec<AxisValue> = plan
                                .axes
                                .iter()
                                .enumerate()
                                .map(|(a, axis)| {
                                    if a == find.axis_index {
                                        value.clone()
                                    } else if axis.replicate {
                                        seed.cloned().unwrap_or_else(|| value.clone())
                                    } else {
                                        combination
                                            .iter()
                                            .find(|(b, _)| *b == a)
                                            .map(|(_, v)| v.clone())
                                            .unwrap_or_else(|| value.clone())
                                    }
                                })
                                .collect();
                            cases.push(plan.push_case(values).map_err(input)?);
                        }
                        asked.push((c, x, cases));
                    }
                }
            }
        }
        if asked.is_empty() {
            return Ok(Progress { plan, rounds, to_run: Vec::new() });
        }
        rounds += 1;
        let mut to_run: Vec<usize> = asked
            .iter()
            .flat_map(|(_, _, cases)| cases.iter().copied())
            .filter(|&i| {
                !finished(&plan.cases[i].id, &case_state(&plan.case_dir(dir, i), &plan.cases[i].sha256))
            })
            .collect();
        to_run.sort_unstable();
        to_run.dedup();
        if !to_run.is_empty() {
            return Ok(Progress { plan, rounds, to_run });
        }
        let indices: Vec<usize> = asked.iter().flat_map(|(_, _, cases)| cases.iter().copied()).collect();
        let metric = read_metric(&plan, dir, &indices, &find)?;
        for (c, x, cases) in asked {
            let values =
                cases.iter().map(|i| metric[indices.iter().position(|j| j == i).unwrap_or(0)]).collect();
            observations[c].push(Observation { x, values });
        }
    }
}

fn input(error: SweepError) -> anyhow::Error {
    anyhow::Error::new(InputError(crate::exit::one_line(&anyhow::Error::new(error))))
}

/// The metric of the cases `indices` of `plan` (NaN for a case that is not done), as `collect` computes it.
fn read_metric(plan: &Plan, dir: &Path, indices: &[usize], find: &FindSpec) -> Result<Vec<f64>> {
    let mut record = PlanRecord::of(plan);
    record.cases = indices.iter().map(|&i| record.cases[i].clone()).collect();
    let (table, ..) = collect_cases(dir, record)?;
    let done = match table.column("status").map(|c| &c.data) {
        Some(ColumnData::Text(s)) => s.iter().filter(|s| *s == "done").count(),
        _ => 0,
    };
    match table.column(&find.metric).map(|c| &c.data) {
        Some(ColumnData::Real(v)) => Ok(v.clone()),
        _ if done == 0 => Ok(vec![f64::NAN; indices.len()]),
        _ => {
            let columns: Vec<&str> = table
                .columns
                .iter()
                .filter(|c| matches!(c.data, ColumnData::Real(_)))
                .map(|c| c.name.as_str())
                .collect();
            Err(InputError(format!(
                "{}: find.metric: \"{}\" is not a column of this sweep's sweep.csv (its numeric columns: {})",
                plan.sweep.path.display(),
                find.metric,
                columns.join(", ")
            ))
            .into())
        }
    }
}
